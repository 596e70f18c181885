"""The arrays the report's figures draw, computed once here (the report computes nothing).

The O−C panel draws every hypothesis that stands and, always, the
best-fitting one (its verdict is recorded in ``curves["marked"]`` so the
figure can mark it when it is excluded or outside its validity).
"""

from __future__ import annotations

import astropy.units as u
import numpy as np

from ttvkit.constants import DAY_S, YEAR_D
from ttvkit.errors import MissingValueError
from ttvkit.inference.predictions import prediction_band
from ttvkit.physics.companions import rv_threshold_semi_amplitude

__all__ = ["figure_curves"]


def _year(bjd):
    from astropy.time import Time

    return Time(np.asarray(bjd, float), format="jd", scale="tdb").decimalyear


def figure_curves(diagnosis) -> dict:
    """Arrays the figures draw (the figures compute nothing)."""
    from ttvkit.physics import activity_envelope

    system, table = diagnosis.system, diagnosis.table
    ref = diagnosis["constant-period"].fit
    data = ref.data
    out = {"point_year": _year(table.time), "point_source": table.source, "point_kind": table.kind,
           "point_oc_s": ref.residuals() * DAY_S, "point_sigma_s": table.uncertainty * DAY_S}
    lead = (diagnosis.standing or diagnosis.assessments)[0]
    out["lead"] = lead.name
    residuals = lead.fit.residuals()
    if lead.fit.hypothesis.has_process:   # less the process's conditional mean: what no hypothesis explains
        from ttvkit.inference.predictions import process_prediction

        residuals = residuals - process_prediction(lead.fit, lead.fit.data.time)[0]
    out["point_residual_s"] = residuals * DAY_S
    grid = np.linspace(table.epoch.min(), table.epoch.max(), 600)
    gdata = data.at_epochs(grid)
    ref_line = ref.hypothesis.predict(ref.model_theta(), gdata)
    out["model_year"] = _year(ref_line + data.t_ref)
    out["models"] = {}
    best = min(diagnosis.assessments, key=lambda a: a.delta_bic)
    shown = [a for a in diagnosis.assessments if a.stands][:4]
    if best not in shown:      # the best fit is always drawn, marked by its verdict when it does not stand
        shown.append(best)
    if lead not in shown:
        shown.append(lead)
    out["marked"] = {a.name: a.verdict for a in shown if not a.stands}
    for a in shown:
        med, lo, hi = prediction_band(a.fit, gdata)
        out["models"][a.name] = ((med - ref_line) * DAY_S, (lo - ref_line) * DAY_S, (hi - ref_line) * DAY_S)
    span_yr = max(np.ptp(table.time) / YEAR_D, 1.0)
    periods = np.geomspace(0.5, 10 * span_yr, 60) * u.yr
    try:
        out["envelope_thin_s"] = activity_envelope(system, periods, "thin shell").value
        out["envelope_finite_s"] = activity_envelope(system, periods, "finite shell").value
        out["envelope_period_yr"] = periods.value
    except MissingValueError:
        pass
    for a in diagnosis.assessments:
        if a.name == "sinusoidal-modulation":
            d = a.fit.derived_table()
            out["signal"] = {k: d[k] for k in ("semi_amplitude", "modulation_period_yr")}
            out["signal_verdict"] = a.verdict
    p = np.geomspace(1 / YEAR_D, 30 * span_yr, 120) * u.yr
    k_limit = rv_threshold_semi_amplitude(p, system.radial_velocity)
    if k_limit is not None:
        out["rv_limit_period_yr"] = p.value
        out["rv_limit_K"] = k_limit.to_value(u.m / u.s)
    out["rv_points"] = {}
    for a in diagnosis.assessments:
        for c in a.checks:
            if c.name == "radial-velocity visibility" and c.value is not None:
                params = a.fit.parameter_table()
                key = "companion_period" if "companion_period" in params else "perturber_period"
                if key in params and a.name not in out["rv_points"]:
                    out["rv_points"][a.name] = (params[key]["value"] / YEAR_D, c.value, c.outcome)
    return out
