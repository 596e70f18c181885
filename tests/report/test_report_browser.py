"""The report renders in a real headless browser (Debian's chromium).

CI installs chromium (.ci/run); elsewhere the test is skipped when no
chromium is on the PATH, and fails if CI=true and chromium is missing.
"""

import os
import re
import shutil
import subprocess

import numpy as np
import pytest
from simulate import simulate

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--hide-scrollbars"]


def _chromium():
    for name in ("chromium", "chromium-browser", "google-chrome"):
        path = shutil.which(name)
        if path:
            return path
    if os.environ.get("CI"):
        pytest.fail("CI must have chromium (.ci/run installs it)")
    pytest.skip("no chromium on this machine")


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    import astropy.units as u

    from ttvkit.diagnosis import diagnose
    from ttvkit.physics import Companion, Orbit, RadialVelocityLimits, Star, System
    from ttvkit.report import write_report

    table = simulate("sinusoidal-modulation", [0.0, 2.0, 30 / 86400, 10 / 86400, 3000.0], np.random.default_rng(41))
    system = System(Star(mass=0.8 * u.Msun, radius=0.8 * u.Rsun, teff=5000 * u.K, rotation_period=10 * u.day),
                    Companion(mass=1 * u.Mjup, radius=1 * u.Rjup), Orbit(period=2.0 * u.day),
                    RadialVelocityLimits(baseline=8 * u.yr, residual_rms=6 * u.m / u.s), name="Test system")
    d = diagnose(table, system, hypotheses=["sinusoidal-modulation", "light-travel-time", "orbital-decay"],
                 sampled=False, progress=False, now=2461376.5)
    folder = tmp_path_factory.mktemp("browser") / "report"
    return write_report(d, folder)["report.html"]


def test_every_figure_loads_without_console_errors(report, tmp_path):
    exe = _chromium()
    res = subprocess.run([exe, *FLAGS, f"--user-data-dir={tmp_path / 'profile'}", "--enable-logging=stderr",
                          "--v=0", "--virtual-time-budget=5000", "--dump-dom", report.as_uri()],
                         capture_output=True, text=True, timeout=120)
    assert res.returncode == 0, res.stderr[-2000:]
    match = re.search(r'data-figures-loaded="(\d+)/(\d+)"', res.stdout)
    assert match, "the page's load check did not run"
    loaded, total = int(match[1]), int(match[2])
    assert total == 6 and loaded == total
    console = [line for line in res.stderr.splitlines() if "CONSOLE" in line]
    assert not [line for line in console if "rror" in line or "Uncaught" in line], console


def test_screenshot_is_not_blank(report, tmp_path):
    import matplotlib.image as mpimg

    exe = _chromium()
    shot = tmp_path / "shot.png"
    res = subprocess.run([exe, *FLAGS, f"--user-data-dir={tmp_path / 'profile'}", "--window-size=1200,1600",
                          f"--screenshot={shot}", report.as_uri()], capture_output=True, text=True, timeout=120)
    assert res.returncode == 0 and shot.exists(), res.stderr[-2000:]
    pixels = mpimg.imread(shot)[..., :3]
    assert pixels.std() > 0.05                   # not a blank page
    assert (pixels.mean(axis=2) < 0.5).mean() > 0.01  # some dark ink: text and figures
