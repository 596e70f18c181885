"""The demo's second scenario: an invented eclipsing binary with a wandering activity cycle.

Nothing here is a real object.

* **Tarrowby A**, an invented K2 dwarf (0.76 M☉, 0.78 R☉, 4900 K), and
  **Tarrowby B**, an invented M1 dwarf (0.52 M☉, 0.51 R☉, 3700 K), on a
  circular 0.6127-d orbit: a detached close binary, both stars convective and
  spun up by the tides.
* The injected timing signal (``BINARY_TRUTH``): a linear ephemeris plus an
  O−C that wanders -- a draw of a stochastically driven damped oscillator
  (RMS 35 s, characteristic period 11 yr, coherence time 30 yr): an
  activity cycle whose length and strength change from cycle to cycle.
* Primary and secondary eclipse mid-times from four invented sources, 1995
  to 2025, in the standards they used (HJD_UTC for the early photoelectric
  work).
* An activity indicator: the seasonal mean V brightness of Tarrowby A, which
  follows the period change ΔP/P = d(O−C)/dt half a year late, with red
  noise of its own (spots come and go) and white photometric errors.

The diagnosis should prefer the wandering cycle to a strict sinusoid, find
that Tarrowby A can power it and the M dwarf perhaps too, see the brightness
follow the period change, and exclude mass transfer (neither star fills its
Roche lobe).
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ttvkit.constants import DAY_S, YEAR_D
from ttvkit.timing.standards import from_bjd_tdb, make_target

__all__ = ["BINARY_TRUTH", "BINARY_NAME", "BinaryScenario", "build_binary_scenario"]

BINARY_NAME = "Tarrowby AB"
_RA, _DEC = 64.83, -22.61

#: The injected truth (BJD_TDB days, days, seconds, years).
BINARY_TRUTH = {
    "reference_time": 2449720.41738,
    "period": 0.6127403,
    "process_rms_s": 35.0,
    "characteristic_period_yr": 11.0,
    "coherence_time_yr": 30.0,
    "indicator_lag_yr": 0.5,
    "indicator_mag_per_dpp": -4.0e4,      # brightness change (mag) per unit ΔP/P
    "indicator_red_noise_mag": 0.004,
    "indicator_red_noise_time_yr": 2.0,
}

SYSTEM_TOML = """\
# Tarrowby AB: an invented detached eclipsing binary (ttvkit demo).
name = "Tarrowby AB"

[star]                 # Tarrowby A, the K dwarf
mass = "0.76 +- 0.02 Msun"
radius = "0.78 +- 0.02 Rsun"
teff = "4900 +- 100 K"
ra = "64.83 deg"
dec = "-22.61 deg"

[other_star]           # Tarrowby B, the M dwarf
mass = "0.52 +- 0.02 Msun"
radius = "0.51 +- 0.02 Rsun"
teff = "3700 +- 100 K"

[orbit]
period = "0.6127403 d"
eccentricity = 0.0
inclination = "86.1 deg"
"""

#: (label, standard of the numbers, standard written, first year, last year, count, 1σ in s, kinds)
_SOURCES = [
    ("Cobble Hill photoelectric photometry", "HJD_UTC", "HJD_UTC", 1995.0, 2003.5, 40, 60.0, ("primary",)),
    ("Wren CCD monitoring", "BJD_TDB", "BJD_TDB", 2002.0, 2015.5, 70, 20.0, ("primary", "secondary")),
    ("Lantern amateur network", "BJD_TDB", "BJD_TDB", 2008.0, 2025.5, 60, 45.0, ("primary",)),
    ("Skylark space photometry", "BJD_TDB", "BJD_TDB", 2019.5, 2025.0, 40, 8.0, ("primary", "secondary")),
]


@dataclass
class BinaryScenario:
    """The binary demo's inputs: eclipse timings, the two-star system file, the indicator series."""

    timings_csv: str
    system_toml: str
    indicator_csv: str
    notes: str

    def write(self, folder: "str | Path") -> dict:
        """Write the inputs into ``folder``; returns name → path."""
        folder = Path(folder)
        folder.mkdir(parents=True, exist_ok=True)
        paths = {"timings": folder / "tarrowby_eclipse_timings.csv", "system": folder / "tarrowby_system.toml",
                 "indicator": folder / "tarrowby_a_brightness.csv"}
        paths["timings"].write_text(self.timings_csv)
        paths["system"].write_text(self.system_toml)
        paths["indicator"].write_text(self.indicator_csv)
        (folder / "SCENARIO.txt").write_text(self.notes)
        return paths


def _year_to_jd(year):
    return 2451545.0 + (np.asarray(year, float) - 2000.0) * YEAR_D


def _wandering_oc(rng: np.random.Generator):
    """The injected O−C (days) as a smooth function of BJD_TDB, and its time derivative ΔP/P.

    A draw of the SHO process (celerite2's covariance, a general-purpose GP
    library) on a 10-day grid over 1994–2026, by a Cholesky factor and this
    generator; a cubic spline between the grid points (the process varies
    on years).
    """
    from celerite2 import terms
    from scipy.interpolate import CubicSpline

    t = BINARY_TRUTH
    grid = np.arange(_year_to_jd(1994.0), _year_to_jd(2026.5), 10.0)
    kernel = terms.SHOTerm(sigma=t["process_rms_s"] / DAY_S, rho=t["characteristic_period_yr"] * YEAR_D,
                           tau=t["coherence_time_yr"] * YEAR_D)
    cov = kernel.get_value(np.abs(grid[:, None] - grid[None, :]))
    chol = np.linalg.cholesky(cov + 1e-12 * np.max(cov) * np.eye(grid.size))
    spline = CubicSpline(grid, chol @ rng.standard_normal(grid.size))
    return spline, spline.derivative()


def build_binary_scenario(seed: int = 20261203) -> BinaryScenario:
    """Build the invented binary's eclipse timings, system file and brightness series.

    Parameters
    ----------
    seed : int
        Seed of the injected cycle and every noise.

    Returns
    -------
    BinaryScenario
    """
    rng = np.random.default_rng(seed)
    t = BINARY_TRUTH
    oc, dpp = _wandering_oc(rng)
    coords = make_target(_RA, _DEC)
    lines = [f"# {BINARY_NAME} eclipse mid-times compiled from invented sources (ttvkit demo).",
             "# uncertainty in days; standard per row as each source gave it.",
             "epoch,time,uncertainty,kind,source,standard"]
    used = set()
    for label, numbers_in, written_as, y0, y1, count, sigma_s, kinds in _SOURCES:
        e0, e1 = ((_year_to_jd(y) - t["reference_time"]) / t["period"] for y in (y0, y1))
        for kind in kinds:
            n = count // len(kinds)
            epochs = np.array(sorted({int(e) for e in rng.uniform(e0, e1, 3 * n)} - {e for e, k in used if k == kind}))
            epochs = np.sort(rng.choice(epochs, n, replace=False))
            used.update((int(e), kind) for e in epochs)
            phase = 0.5 if kind == "secondary" else 0.0
            linear = t["reference_time"] + t["period"] * (epochs + phase)
            error = sigma_s * (1.5 if kind == "secondary" else 1.0)
            observed = linear + oc(linear) + rng.normal(0.0, error, epochs.size) / DAY_S
            numbers = from_bjd_tdb(observed, numbers_in, coords)
            lines += [f"{int(e)},{x:.6f},{error / DAY_S:.7f},{kind},{label},{written_as}"
                      for e, x in zip(epochs, numbers)]
    indicator = _indicator(rng, dpp)
    notes = (__doc__ or "") + "\nInjected truth:\n" + json.dumps(BINARY_TRUTH, indent=2) + "\n"
    return BinaryScenario("\n".join(lines) + "\n", SYSTEM_TOML, indicator, notes)


def _indicator(rng: np.random.Generator, dpp) -> str:
    """Seasonal V brightness of Tarrowby A, 1997–2025: follows ΔP/P half a year late, red + white noise."""
    t = BINARY_TRUTH
    seasons = np.arange(1997, 2026)
    times = np.sort(np.concatenate([_year_to_jd(s + rng.uniform(0.55, 0.95, 4)) for s in seasons]))
    lag = t["indicator_lag_yr"] * YEAR_D
    signal = t["indicator_mag_per_dpp"] * dpp(times - lag)
    # red noise: an Ornstein–Uhlenbeck process sampled exactly at the (sorted) times
    tau = t["indicator_red_noise_time_yr"] * YEAR_D
    red = np.empty(times.size)
    red[0] = rng.normal(0, t["indicator_red_noise_mag"])
    for i in range(1, times.size):
        keep = np.exp(-(times[i] - times[i - 1]) / tau)
        red[i] = keep * red[i - 1] + np.sqrt(1 - keep ** 2) * rng.normal(0, t["indicator_red_noise_mag"])
    error = rng.uniform(0.003, 0.006, times.size)
    value = 10.734 + signal + red + rng.normal(0, error)
    rows = ["# seasonal mean V magnitude of Tarrowby A (invented; ttvkit demo); time BJD_TDB",
            "time,v_mag,v_mag_err"]
    rows += [f"{a:.4f},{b:.5f},{c:.5f}" for a, b, c in zip(times, value, error)]
    return "\n".join(rows) + "\n"
