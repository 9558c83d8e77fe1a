"""Persistence: an immutable, auditable record of series versions, runs and their results.

Modules, one concept each:

- ``engine``: the ``FOLDLINE_DATABASE_URL`` setting, engines and sessions;
- ``schema`` (tables), ``types`` (UTC timestamps, JSON/JSONB), ``migrate`` + ``migrations``;
- ``series_store`` (series versions), ``catalog`` (candidates, plans), ``runs`` (lifecycle),
  ``results_store`` (per-series units of results), ``queries`` (questions over them);
- the forecast ledger: ``champions`` (each series' chosen candidate and its history),
  ``ledger`` (issued forecasts), ``outcomes`` (issued forecasts scored against later
  versions), ``ledger_rows`` (their conversion to and from rows);
- ``audit`` (hash-chained event log), ``contents`` and ``digest`` (what events vouch for),
  ``verify`` (checking the log and the content);
- ``errors`` (the storage error hierarchy), ``guard`` and ``bulk`` (helpers);
- for the HTTP API: ``keys`` (API keys as hashes), ``series_catalog`` (finding series by
  prefix and tags), ``run_index`` (runs by idempotency key, their versions),
  ``result_tables`` (a run's results as paged tables), ``rankings`` (the BI ranking),
  ``audit_pages`` (the log page by page), ``status`` (schema revision, run counts).

Storage functions take a :class:`~sqlalchemy.orm.Session` and never commit: the caller owns
the transaction (``with session.begin(): ...``).
"""
