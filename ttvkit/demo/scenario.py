"""The built-in demo: an invented star, an invented planet, invented timings.

Nothing here is a real object.  The scenario:

* **Orvessa**, an invented K1 dwarf (0.86 M☉, 0.82 R☉, 5150 K, rotation
  period 14 d, a photometric activity cycle of about 9 yr with 1.2 %
  peak-to-peak variability) at the invented position RA 287.41°, Dec +31.18°.
* **Orvessa b**, an invented hot Jupiter (1.9 M_Jup, 1.15 R_Jup) on a
  circular 1.8734-d orbit (a/R* ≈ 7.4).
* The injected timing signal (``TRUTH`` below): a linear ephemeris plus a
  sinusoidal O−C modulation of semi-amplitude 50 s and period 9.5 yr.  Its
  cause is left for the diagnosis to find: an activity cycle, a companion on
  a circular orbit and a planet near a resonance all give this shape, and
  only the physics of the invented star (a slow rotator, quiet RVs) tells
  them apart.  White timing noise is drawn from a fixed seed (``SEED``).
* Six invented sources from 2004 to 2025, in the standards such sources use:
  HJD_UTC for the early ground-based work, BJD_TDB and the mission day count
  BTJD for the recent data.  **One source is planted in the wrong
  standard**: "Meridian 1.2-m photometry" gives BJD_UTC numbers labelled
  BJD_TDB, so its times sit 65–66 s early; ttvkit's standards check must
  catch it.
* Light curves of six recent transits (invented space-photometry windows at
  2-min cadence, 600 ppm noise), drawn with batman from the same truth, for
  the mid-time measurement.
"""

from __future__ import annotations

import io
import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ttvkit.constants import DAY_S, YEAR_D
from ttvkit.timing.standards import from_bjd_tdb, make_target

__all__ = ["TRUTH", "SEED", "STAR_NAME", "PLANET_NAME", "DemoScenario", "build_demo_scenario",
           "SYSTEM_TOML"]

SEED = 20261201
STAR_NAME = "Orvessa"
PLANET_NAME = "Orvessa b"
RA_DEG, DEC_DEG = 287.41, 31.18

#: The injected truth (BJD_TDB days, days, seconds, years).
TRUTH = {
    "reference_time": 2456000.31412,
    "period": 1.8734192,
    "modulation_semi_amplitude_s": 50.0,
    "modulation_period_yr": 9.5,
    "modulation_phase_rad": 0.8,
}

#: Transit shape of the light curves.
SHAPE = {"radius_ratio": 0.1441, "a_over_rstar": 7.42, "impact_parameter": 0.35,
         "u1": 0.46, "u2": 0.20, "cadence_min": 2.0, "noise_ppm": 600.0}

SYSTEM_TOML = """\
# Orvessa: an invented K dwarf and its invented hot Jupiter (ttvkit demo).
name = "Orvessa b"

[star]
mass = "0.86 Msun"
radius = "0.82 Rsun"
teff = "5150 K"
rotation_period = "14 d"
activity_cycle = "9 yr"
variability_amplitude = 0.012     # peak-to-peak relative flux
ra = "287.41 deg"
dec = "31.18 deg"

[companion]
mass = "1.9 Mjup"
radius = "1.15 Rjup"

[orbit]
period = "1.8734192 d"
a_over_rstar = 7.42
eccentricity = 0.0
inclination = "87.3 deg"

[radial_velocity]
baseline = "12 yr"
residual_rms = "9 m/s"
"""

#: (label, standard the numbers are written in, standard written in the file,
#:  first year, last year, number of mid-times, 1σ in seconds, kind)
_SOURCES = [
    ("Tarn discovery survey", "HJD_UTC", "HJD_UTC", 2004.3, 2006.9, 12, 95.0, "transit"),
    ("Ridgeline Observatory follow-up", "HJD_UTC", "HJD_UTC", 2007.5, 2012.8, 16, 45.0, "transit"),
    ("Meridian 1.2-m photometry", "BJD_UTC", "BJD_TDB", 2009.2, 2013.9, 12, 22.0, "transit"),
    ("Lantern amateur network", "BJD_TDB", "BJD_TDB", 2011.0, 2025.6, 30, 60.0, "transit"),
    ("Skylark space photometry", "BTJD", "BTJD", 2019.5, 2024.7, 24, 18.0, "transit"),
    ("Skylark space photometry (occultations)", "BTJD", "BTJD", 2019.5, 2024.7, 5, 150.0,
     "occultation"),
]


def true_mid_times(epoch, kind_phase=0.0) -> np.ndarray:
    """Injected mid-times (BJD_TDB) of the demo planet for ``epoch``."""
    linear = TRUTH["reference_time"] + TRUTH["period"] * (np.asarray(epoch, float) + kind_phase)
    years = (linear - TRUTH["reference_time"]) / YEAR_D
    phase = 2 * np.pi * years / TRUTH["modulation_period_yr"] + TRUTH["modulation_phase_rad"]
    return linear + TRUTH["modulation_semi_amplitude_s"] * np.sin(phase) / DAY_S


def _year_to_epoch(year: float) -> float:
    jd = 2451545.0 + (year - 2000.0) * YEAR_D
    return (jd - TRUTH["reference_time"]) / TRUTH["period"]


@dataclass
class DemoScenario:
    """The demo's inputs, ready to be written as a person would have them."""

    timings_csv: str
    system_toml: str
    light_curves: dict
    notes: str

    def write(self, folder: "str | Path") -> dict:
        """Write the inputs into ``folder``; returns name → path."""
        folder = Path(folder)
        (folder / "light_curves").mkdir(parents=True, exist_ok=True)
        paths = {"timings": folder / "orvessa_b_timings_compiled.csv",
                 "system": folder / "orvessa_system.toml"}
        paths["timings"].write_text(self.timings_csv)
        paths["system"].write_text(self.system_toml)
        for name, text in self.light_curves.items():
            p = folder / "light_curves" / name
            p.write_text(text)
            paths[f"light_curve:{name}"] = p
        (folder / "SCENARIO.txt").write_text(self.notes)
        return paths


def target():
    """The demo target's coordinates."""
    return make_target(RA_DEG, DEC_DEG)


def build_demo_scenario(seed: int = SEED) -> DemoScenario:
    """Build the invented timing compilation, system file and light curves.

    Parameters
    ----------
    seed : int
        Seed of the timing and photometric noise.

    Returns
    -------
    DemoScenario
    """
    rng = np.random.default_rng(seed)
    coords = target()
    lines = ["# Orvessa b mid-times compiled from invented sources (ttvkit demo).",
             "# uncertainty in days; standard per row as each source gave it.",
             "epoch,time,uncertainty,kind,source,standard"]
    used = set()
    for label, numbers_in, written_as, y0, y1, count, sigma_s, kind in _SOURCES:
        e0, e1 = _year_to_epoch(y0), _year_to_epoch(y1)
        epochs = np.unique(np.round(rng.uniform(e0, e1, size=count * 3)).astype(int))
        epochs = np.array([e for e in epochs if (e, kind) not in used])
        epochs = np.sort(rng.choice(epochs, size=count, replace=False))
        used.update((int(e), kind) for e in epochs)
        phase = 0.5 if kind == "occultation" else 0.0
        truth = true_mid_times(epochs, phase)
        observed = truth + rng.normal(0.0, sigma_s, size=epochs.size) / DAY_S
        numbers = from_bjd_tdb(observed, numbers_in, coords)
        for e, t in zip(epochs, numbers):
            lines.append(f"{int(e)},{t:.6f},{sigma_s / DAY_S:.6f},{kind},{label},{written_as}")
    timings_csv = "\n".join(lines) + "\n"
    light_curves = _light_curves(rng)
    notes = (__doc__ or "") + "\nInjected truth:\n" + json.dumps(TRUTH, indent=2) + "\n"
    return DemoScenario(timings_csv, SYSTEM_TOML, light_curves, notes)


def _light_curves(rng: np.random.Generator) -> dict:
    import batman

    params = batman.TransitParams()
    params.t0 = 0.0
    params.per = TRUTH["period"]
    params.rp = SHAPE["radius_ratio"]
    params.a = SHAPE["a_over_rstar"]
    params.inc = float(np.degrees(np.arccos(SHAPE["impact_parameter"] / SHAPE["a_over_rstar"])))
    params.ecc = 0.0
    params.w = 90.0
    params.limb_dark = "quadratic"
    params.u = [SHAPE["u1"], SHAPE["u2"]]
    cadence = SHAPE["cadence_min"] / 1440.0
    out = {}
    first = int(np.ceil(_year_to_epoch(2025.1)))
    for k, epoch in enumerate(range(first, first + 12, 2)):
        mid = float(true_mid_times(epoch))
        t = np.arange(mid - 0.16, mid + 0.16, cadence)
        model = batman.TransitModel(params, t - mid)
        flux = model.light_curve(params) * (1 + 0.0015 * (t - mid))
        flux = flux + rng.normal(0.0, SHAPE["noise_ppm"] * 1e-6, t.size)
        buf = io.StringIO()
        buf.write(f"# invented light curve of {PLANET_NAME}, epoch {epoch}; time BJD_TDB\n")
        buf.write("time,flux,flux_err\n")
        for a, b in zip(t, flux):
            buf.write(f"{a:.7f},{b:.6f},{SHAPE['noise_ppm'] * 1e-6:.6f}\n")
        out[f"orvessa_b_epoch{epoch}.csv"] = buf.getvalue()
    return out
