"""The forecast ledger: champion choices, issued forecasts, their outcomes against later
actuals, and a series' dossier as it stood at a point in time.
"""

from storage.ledger.champions import (
    ChampionChoice,
    champion_history,
    choose_champion,
    current_champion,
    current_champions,
)
from storage.ledger.dossier import (
    ChampionEntry,
    Dossier,
    DossierForecast,
    ForecastWindow,
    series_dossier,
)
from storage.ledger.forecasts import IssuedRecord, get_issued, list_issued, record_issued_forecast
from storage.ledger.outcomes import (
    OutcomeSet,
    current_outcomes,
    due_outcomes,
    issued_with_outcomes,
    outcome_sets,
    record_outcomes,
)

__all__ = [
    "ChampionChoice",
    "ChampionEntry",
    "Dossier",
    "DossierForecast",
    "ForecastWindow",
    "IssuedRecord",
    "OutcomeSet",
    "champion_history",
    "choose_champion",
    "current_champion",
    "current_champions",
    "current_outcomes",
    "due_outcomes",
    "get_issued",
    "issued_with_outcomes",
    "list_issued",
    "outcome_sets",
    "record_issued_forecast",
    "record_outcomes",
    "series_dossier",
]
