"""Leverage: does one row or one source decide a detection?

A period change claimed from a compiled table can rest on a single early
mid-time far from a modern ephemeris.  For each signal parameter (every
parameter but the ephemeris ``T0`` and ``P``) measured at more than 3σ,
the row and the source whose removal moves it most are found with the
linearised deletion formula of weighted least squares (Cook 1977,
Technometrics 19, 15: Δθ = (JᵀJ − J_SᵀJ_S)⁻¹ J_Sᵀ r_S for the deleted set S)
and then refitted exactly; when the exact refit moves the parameter by more
than its own error, the result says which and what the fit gives without it.
"""

from __future__ import annotations

import numpy as np

__all__ = ["Leverage", "find_leverage"]

_EPHEMERIS = ("T0", "P")
#: A signal weaker than this many σ is not a detection and is not examined (common practice, no source).
_DETECTION_SIGMA = 3.0


class Leverage(dict):
    """One decisive row or source: a dict with ``parameter``, ``what``, ``which``, ``with``, ``without``."""

    def message(self) -> str:
        w, wo = self["with"], self["without"]
        return (f"{self['parameter']} = {w['value']:.4g} ± {w['error']:.2g} {w['unit']} depends on {self['what']} "
                f"{self['which']}: without it the fit gives {wo['value']:.4g} ± {wo['error']:.2g} {wo['unit']} "
                "(a shift larger than the error)")


def _jacobian(result) -> np.ndarray:
    hyp, data = result.hypothesis, result.data
    theta = result.model_theta().astype(float)
    step = 1e-6 * np.maximum(1.0, np.abs(theta))
    rows = theta + np.diag(step)
    base = hyp.predict(theta, data)
    return ((hyp.predict(rows, data) - base) / step[:, None]).T / data.sigma[:, None]


def _shift(jac, resid, index, k):
    """Linearised change of parameter ``k`` when the rows ``index`` are deleted."""
    a = jac.T @ jac - jac[index].T @ jac[index]
    try:
        return float(np.linalg.solve(a, jac[index].T @ resid[index])[k])
    except np.linalg.LinAlgError:
        return np.inf  # the rest cannot determine the parameter: maximal leverage


def _estimate(result, name):
    for table in (result.parameter_table(), result.derived_table()):
        if name in table:
            row = table[name]
            return {"value": float(row["value"]), "error": float(0.5 * (row["lower"] + row["upper"])),
                    "unit": row["unit"]}
    return None


def find_leverage(result, table, context=None) -> list:
    """Rows or sources that alone decide a >3σ signal parameter of ``result``.

    Parameters
    ----------
    result : FitResult
        A fit of ``table``.
    table : TimingTable
        The table fitted (its sources and times name what is decisive).
    context : HostContext or System, optional
        As passed to the fit.

    Returns
    -------
    list of Leverage
        Empty when no single row or source decides a detection, for
        expensive (N-body) hypotheses, whose refits would take minutes, and for
        a Gaussian-process hypothesis, whose correlated rows the deletion
        formula cannot rank.
    """
    from ttvkit.inference.fitting import fit

    if result.hypothesis.expensive:  # an N-body refit per candidate would take minutes: not examined
        return []
    if result.hypothesis.has_process:
        # A Gaussian process is in the likelihood, not in predict: its parameters have no Jacobian column and
        # the rows are correlated, so the deletion formula cannot rank rows (every shift is infinite and row 0
        # would be "examined" by default).  Not examined.
        return []
    names = list(result.parameter_table())[:result.hypothesis.n_parameters]
    jac = _jacobian(result)
    resid = result.residuals() / result.data.sigma
    out = []
    for k, name in enumerate(names):
        est = _estimate(result, name)
        if name in _EPHEMERIS or est is None or not abs(est["value"]) > _DETECTION_SIGMA * est["error"]:
            continue
        candidates = []
        row_shift = [abs(_shift(jac, resid, [i], k)) for i in range(len(table))]
        i = int(np.argmax(row_shift))
        candidates.append(("the mid-time", f"at BJD_TDB {table.time[i]:.5f} (epoch {table.epoch[i]}, "
                           f"source {table.source[i]!r})", np.arange(len(table)) != i))
        sources = table.sources
        if len(sources) > 1:
            s_shift = [abs(_shift(jac, resid, np.flatnonzero(table.source == s), k)) for s in sources]
            s = sources[int(np.argmax(s_shift))]
            candidates.append(("the source", repr(s), table.source != s))
        for what, which, mask in candidates:
            if mask.sum() <= result.n_parameters + 1:
                continue
            like = result.likelihood.restricted_to(table.source[mask])  # no jitter left without rows
            refit = fit(table.subset(mask), result.hypothesis, like, context=context)
            new = _estimate(refit, name)
            if new is not None and abs(new["value"] - est["value"]) > est["error"]:
                out.append(Leverage(parameter=name, what=what, which=which, **{"with": est, "without": new}))
    return out
