"""Light curves to mid-times: reading, transit windows, the transit shape, per-transit fits."""

from ttvkit.lightcurves.measure import MeasureReport, fit_shape, guess_shape, measure
from ttvkit.lightcurves.midtime import (
           MidTime,
           TransitShape,
           fit_mid_time,
           shape_from_toml,
)
from ttvkit.lightcurves.reading import LightCurve, Window, cut_windows, read_light_curve

__all__ = ["measure", "fit_shape", "guess_shape", "MeasureReport", "MidTime", "TransitShape",
           "fit_mid_time", "shape_from_toml", "LightCurve", "Window", "cut_windows", "read_light_curve"]
