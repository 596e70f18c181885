"""Numbers printed with the digits their uncertainty needs.

A value is shown to the decimal place of the second significant digit of
its smaller error bar (a T0 of 2456000.31412 ± 0.00004 d keeps its last
digits; ``2456000.3`` would throw the measurement away).  Common practice,
no source.
"""

from __future__ import annotations

import math

__all__ = ["format_value", "decimals_for"]


def decimals_for(error: float, significant: int = 2) -> int | None:
    """Decimal places that show ``significant`` digits of ``error`` (None if it is not usable)."""
    if not (math.isfinite(error) and error > 0):
        return None
    return max(0, significant - 1 - int(math.floor(math.log10(error))))


def format_value(value: float, lower: float, upper: float | None = None) -> str:
    """``value -lower +upper`` (or ``value ± error``) with the digits the errors need."""
    upper = lower if upper is None else upper
    finite = [e for e in (lower, upper) if math.isfinite(e) and e > 0]
    places = decimals_for(min(finite)) if finite else None
    if places is None:
        return f"{value:.10g} -{lower:.3g} +{upper:.3g}"
    if (places > 6 and abs(value) < 1e-3) or abs(value) > 1e15:  # tiny or huge: a mantissa with the digits the error needs
        scale = math.floor(math.log10(max(abs(value), min(finite))))
        sig = max(1, scale - math.floor(math.log10(min(finite))) + 2)
        return f"{value:.{sig - 1}e} -{lower:.2e} +{upper:.2e}"
    if math.isclose(lower, upper, rel_tol=0.05):
        return f"{value:.{places}f} ± {upper:.{places}f}"
    return f"{value:.{places}f} -{lower:.{places}f} +{upper:.{places}f}"
