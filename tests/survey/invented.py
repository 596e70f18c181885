"""Invented survey targets for the survey's tests and benchmark (invented names, invented values).

Every target is a hot Jupiter around an invented Sun-like or K-type star,
timed at 2-d period over about 22 years, with one of three timing
signals: none (a constant period), a tidal-decay-like quadratic drift, or
a sinusoidal O−C modulation.  One target can be planted broken: its table
holds a time that is not a number.  The seed fixes every table.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
from simulate import PERIOD, simulate

SCENARIOS = ("null", "decay", "modulation")

#: Internal parameters (days) of each scenario: a −2e-9 d/epoch dP/dE (dP/dt = −31.6 ms/yr, of the size
#: measured on the fastest-decaying hot Jupiter) is a 1400-s quadratic O−C over 4000 epochs, far above 30-s
#: errors; a 100-s modulation of period 3000 d.
_THETA = {"null": ("constant-period", [0.0, PERIOD]),
          "decay": ("orbital-decay", [0.0, PERIOD, -2e-9]),
          "modulation": ("sinusoidal-modulation", [0.0, PERIOD, 100 / 86400, 0.0, 3000.0])}

_SYSTEM = """\
# {name}: an invented star and its invented hot Jupiter (ttvkit survey tests).
name = "{name}"

[star]
mass = "{mass} Msun"
radius = "{radius} Rsun"
teff = "{teff} K"

[companion]
mass = "1.3 Mjup"

[orbit]
period = "{period} d"

[radial_velocity]
baseline = "6 yr"
residual_rms = "4 m/s"
"""

#: The hypotheses the survey's tests compare (a short list keeps each target to about a second of fitting).
TEST_HYPOTHESES = ("constant-period", "orbital-decay", "sinusoidal-modulation")


def scenario(name: str) -> str:
    """The scenario of an invented target, from its number."""
    return SCENARIOS[int(name.rsplit("-", 1)[1]) % 3]


def target_name(i: int) -> str:
    """Invented names: 'Quillon-001' and so on."""
    return f"Quillon-{i:03d}"


def write_targets(folder: "str | Path", n: int, seed: int = 7, n_points: int = 30, broken: int | None = None,
                  manifest: bool = True, columns: dict | None = None) -> Path:
    """Write ``n`` invented targets (tables + system files) and, if asked, ``manifest.csv``; returns the folder
    or the manifest.  Scenario ``i % 3`` of SCENARIOS; the target numbered ``broken`` gets an unreadable time;
    ``columns`` are option columns given to every target in the manifest."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    lines = []
    for i in range(n):
        name = target_name(i)
        hypothesis, theta = _THETA[SCENARIOS[i % 3]]
        table = simulate(hypothesis, theta, rng, n=n_points)
        table.write(folder / f"{name}.ecsv")
        if i == broken:
            _break(folder / f"{name}.ecsv")
        k_dwarf = i % 2 == 1
        (folder / f"{name}.toml").write_text(_SYSTEM.format(
            name=name, mass=0.78 if k_dwarf else 1.02, radius=0.76 if k_dwarf else 1.05,
            teff=4700 if k_dwarf else 5900, period=PERIOD))
        lines.append({"target": name, "table": f"{name}.ecsv", "system": f"{name}.toml", **(columns or {})})
    if not manifest:
        return folder
    path = folder / "manifest.csv"
    with path.open("w", newline="") as handle:
        writer = csv.DictWriter(handle, ["target", "table", "system", *(columns or {})])
        writer.writeheader()
        writer.writerows(lines)
    return path


def _break(path: Path) -> None:
    """Replace the first data row's time by a word (a broken input the survey must record, not crash on)."""
    lines = path.read_text().splitlines()
    first = next(i for i, line in enumerate(lines) if line and not line.startswith("#") and i > 0
                 and lines[i - 1] and not lines[i - 1].startswith("#"))
    fields = lines[first].split(" ")
    fields[1] = "cloudy"
    lines[first] = " ".join(fields)
    path.write_text("\n".join(lines) + "\n")


def assert_same_report(folder_a: "str | Path", folder_b: "str | Path") -> None:
    """Two report folders hold the same files with the same bytes (PDFs: apart from their creation date)."""
    import re

    a, b = Path(folder_a), Path(folder_b)
    names = sorted(p.name for p in a.iterdir())
    assert names == sorted(p.name for p in b.iterdir())
    assert "report.html" in names and "diagnosis.json" in names
    for name in names:
        x, y = (a / name).read_bytes(), (b / name).read_bytes()
        if name.endswith(".pdf"):  # matplotlib stamps the time of writing into a PDF
            x, y = (re.sub(rb"/CreationDate \([^)]*\)", b"", v) for v in (x, y))
        assert x == y, f"{name} differs between {a} and {b}"
