"""Diagnostics per candidate: the full-series fit (coefficients, information criteria,
residual tests, roots), stability across the re-estimating folds, and their charts."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from backtest.parameter_names import readable, seasonal_period
from backtest.results import CandidateInfo, SeriesResult
from service.views.charts import parameter_path_chart, residual_chart
from service.views.charts.parameters import default_names
from service.views.report.embed import ChartEmbedder
from service.views.report.html import Html, element, join, table
from service.views.report.numbers import MISSING, fixed, general, p_value, share, verdict
from service.views.report.parameters import parameter_cell
from service.views.report.residuals import FitResiduals, residual_scale
from service.views.report.selection import charted_note

ALPHA = 0.05


def diagnostics_section(sr: SeriesResult, charts: ChartEmbedder, charted: frozenset[str], *,
                        residuals: Mapping[str, FitResiduals | None],
                        unit: str | None) -> Html:
    """One block per candidate, with residual and parameter charts for ``charted`` ones."""
    blocks = [_candidate(sr, c, charts if c.candidate_id in charted else None,
                         residuals.get(c.candidate_id), unit) for c in sr.candidates]
    intro = ("The fit to the whole series describes the model as it would be used today; it "
             "includes the periods the backtest forecast, so it is not an out-of-sample check. "
             + charted_note(sr))
    return join([element("h3", "Diagnostics per candidate"),
                 element("p", intro.strip(), cls="note"), *blocks])


def has_parameter_paths(sr: SeriesResult, c: CandidateInfo) -> bool:
    """Whether the candidate gets a parameter-path chart: a model (benchmarks estimate only
    a residual spread) with at least two completed re-estimating folds."""
    refits = [f for f in sr.folds if f.candidate_id == c.candidate_id and f.reestimated
              and f.status == "ok" and f.params]
    return (c.spec.get("family") != "benchmark" and len(refits) >= 2
            and bool(default_names(sr, c.candidate_id)))


def has_residual_chart(sr: SeriesResult, candidate_id: str) -> bool:
    """Whether the stored diagnostics hold residual autocorrelations to draw."""
    diagnostics = sr.evidence.get("diagnostics", {}).get(candidate_id) or {}
    return bool(((diagnostics.get("residuals") or {}).get("acf") or {}).get("acf"))


def _candidate(sr: SeriesResult, c: CandidateInfo, charts: ChartEmbedder | None,
               fitted: FitResiduals | None, unit: str | None) -> Html:
    diagnostics = sr.evidence.get("diagnostics", {}).get(c.candidate_id) or {}
    parts: list[object] = [element("h4", c.label, " ", element("span", c.candidate_id,
                                                               cls="mono"))]
    if "error" in diagnostics:
        parts.append(element("p", f"The fit to the whole series failed: {diagnostics['error']}",
                             cls="alert"))
    elif diagnostics:
        period = seasonal_period(c.spec, sr.series.get("season_length"))
        parts += [_estimation(diagnostics), _coefficients(diagnostics, period),
                  _residual_tests(diagnostics), _roots(diagnostics)]
    parts.append(_stability(sr.evidence.get("stability", {}).get(c.candidate_id),
                            seasonal_period(c.spec, sr.series.get("season_length"))))
    for note in diagnostics.get("warnings") or ():
        parts.append(element("p", f"Warning from the full-series fit: {note}", cls="note"))
    for section, reason in (diagnostics.get("unavailable") or {}).items():
        parts.append(element("p", f"Not available, {section.replace('_', ' ')}: {reason}",
                             cls="note"))
    if charts is None:
        return Html(f'<div class="candidate">\n{join(parts)}\n</div>')
    if has_residual_chart(sr, c.candidate_id):
        parts.append(_residual_chart(sr, c, charts, fitted, unit))
    if has_parameter_paths(sr, c):
        parts.append(charts.embed(
            parameter_path_chart(sr, c.candidate_id),
            f"{c.label}: estimates at each re-estimating origin with +/- 1.96 standard "
            "errors where the fit reports them; the stability rule flags a coefficient whose "
            "range exceeds 3 median standard errors or that is significant with both signs."))
    return Html(f'<div class="candidate">\n{join(parts)}\n</div>')


def _residual_chart(sr: SeriesResult, c: CandidateInfo, charts: ChartEmbedder,
                    fitted: FitResiduals | None, unit: str | None) -> Html:
    if fitted is None:
        figure = residual_chart(sr, c.candidate_id)
        extra = " The residual series itself was not available, so only its " \
                "autocorrelations are drawn."
    else:
        figure = residual_chart(sr, c.candidate_id, residuals=fitted.values,
                                periods=fitted.periods,
                                residual_unit=residual_scale(c.spec, unit))
        extra = " Residuals recomputed by refitting the candidate to the stored series."
    return charts.embed(figure, f"{c.label}: autocorrelations of the one-step residuals of "
                                f"the full-series fit, with the 95 % white-noise bounds."
                                + extra)


def _estimation(d: Mapping[str, Any]) -> Html:
    estimation = d.get("estimation") or {}
    covariance = (d.get("covariance") or {}).get("description")
    text = f"Estimation: {estimation.get('method', MISSING)}"
    if estimation.get("converged") is not None:
        text += f"; converged: {verdict(estimation['converged'], 'yes', 'no')}"
    if covariance:
        text += f"; standard errors from the {covariance}"
    criteria = d.get("information_criteria")
    if criteria:
        text += (f". Log-likelihood {fixed(criteria.get('loglik'), 2)}, AIC "
                 f"{fixed(criteria.get('aic'), 2)}, AICc {fixed(criteria.get('aicc'), 2)}, BIC "
                 f"{fixed(criteria.get('bic'), 2)} ({criteria.get('n_parameters')} parameters, "
                 f"{criteria.get('nobs_effective')} effective observations)")
    return element("p", text + ".")


def _coefficients(d: Mapping[str, Any], period: int | None) -> Html:
    rows = [(parameter_cell(r["name"], period), general(r.get("estimate")),
             general(r.get("std_error")), fixed(r.get("z"), 2), p_value(r.get("p_value")),
             r.get("note") or "")
            for r in d.get("coefficients") or ()]
    if not rows:
        return Html("")
    return table(["coefficient", "estimate", "s.e.", "z", "p", "note"], rows,
                 numeric=(1, 2, 3, 4))


def _residual_tests(d: Mapping[str, Any]) -> Html:
    residuals = d.get("residuals") or {}
    rows = []
    for test in residuals.get("ljung_box") or ():
        rows.append((f"Ljung-Box, lag {test['lag']}", fixed(test.get("q"), 2),
                     test.get("df", MISSING), p_value(test.get("p_value")),
                     _reading(test.get("p_value"), "autocorrelation left")))
    normality = residuals.get("jarque_bera") or {}
    if normality:
        rows.append((f"Jarque-Bera (skewness {fixed(normality.get('skewness'), 2)}, "
                     f"kurtosis {fixed(normality.get('kurtosis'), 2)})",
                     fixed(normality.get("statistic"), 2), normality.get("df", MISSING),
                     p_value(normality.get("p_value")),
                     _reading(normality.get("p_value"), "not normal")))
    arch = residuals.get("arch_lm") or {}
    if arch:
        rows.append((f"ARCH LM, {arch.get('nlags')} lags", fixed(arch.get("lm"), 2),
                     arch.get("nlags", MISSING), p_value(arch.get("lm_p_value")),
                     _reading(arch.get("lm_p_value"), "changing variance")))
    acf = residuals.get("acf") or {}
    outside = [f"ACF: {', '.join(map(str, acf.get('acf_outside') or ())) or 'none'}",
               f"PACF: {', '.join(map(str, acf.get('pacf_outside') or ())) or 'none'}"]
    parts: list[object] = [element("p", f"Residuals: {residuals.get('source', MISSING)} "
                                        f"(n = {residuals.get('n', MISSING)}).")]
    if rows:
        parts.append(table(["test", "statistic", "df", "p", f"at {ALPHA:.0%}"], rows,
                           numeric=(1, 2, 3)))
    if acf:
        parts.append(element("p", "Lags beyond the +/- 1.96/sqrt(n) bounds: "
                                  + "; ".join(outside) + "."))
    return join(parts)


def _reading(p: float | None, finding: str) -> str:
    if p is None:
        return MISSING
    return f"rejects: {finding}" if p < ALPHA else "does not reject"


def _roots(d: Mapping[str, Any]) -> Html:
    roots = d.get("roots")
    if not roots:
        return Html("")
    notes = []
    for side, name in (("ar", "Autoregressive"), ("ma", "Moving-average")):
        polynomial = roots.get(side) or {}
        if polynomial.get("min_modulus_in_b") is None:
            continue
        flag = (" on or inside the unit circle" if polynomial.get("on_or_inside_unit_circle")
                else " near the unit circle" if polynomial.get("near_unit") else "")
        notes.append(f"{name} roots: smallest modulus {fixed(polynomial['min_modulus_in_b'])}"
                     + (f" ({flag.strip()})" if flag else ""))
    if not notes:
        return Html("")
    cls = "alert" if any("unit circle" in n for n in notes) else None
    return element("p", "; ".join(notes) + ".", cls=cls)


def _stability(stability: Mapping[str, Any] | None, period: int | None) -> Html:
    if not stability:
        return Html("")
    if "error" in stability:
        return element("p", f"The summary of the re-estimating folds failed: "
                            f"{stability['error']}", cls="alert")
    unstable = stability.get("unstable") or []
    box = stability.get("ljung_box") or {}
    finding = ("flagged unstable: " + ", ".join(readable(n, period) for n in unstable)
               if unstable
               else "no coefficient flagged unstable")
    text = (f"Across {stability.get('n_folds')} re-estimating folds: {finding}; converged in "
            f"{share(stability.get('share_converged'), 0)}")
    if box.get("n_tested"):
        text += (f"; Ljung-Box at lag {box['lag']} rejects in "
                 f"{share(box.get('share_rejected'), 0)} of them")
    return element("p", text + ".", cls="alert" if unstable else None)
