"""The time-standard mix-up check on simulated compilations.

The offsets planted here are the physical ones: BJD_UTC labelled BJD_TDB
sits TT-UTC = 32.184 s + leap seconds early (IERS Bulletin C; 66.184 s in
2009-2012); an HJD labelled BJD is off by up to ~4 s (Eastman et al. 2010).
"""

import numpy as np
import pytest

from ttvkit import (
    TimingTable,
    from_bjd_tdb,
    make_target,
    source_offsets,
    suspect_standards,
)

TARGET = make_target(287.41, 31.18)
P, T0 = 1.8734192, 2456000.31412


def compilation(rng, mislabel=None, modulation_s=0.0, sigma=20.0):
    """Five interleaved sources; ``mislabel`` = (source index, true standard)."""
    rows = []
    for k in range(5):
        epochs = np.sort(rng.choice(np.arange(-1500, 2000), 20, replace=False))
        truth = T0 + P * epochs + modulation_s / 86400 * np.sin(2 * np.pi * epochs * P / 3470)
        obs = truth + rng.normal(0, sigma, epochs.size) / 86400
        given = "BJD_TDB"
        if mislabel is not None and mislabel[0] == k:
            obs = from_bjd_tdb(obs, mislabel[1], TARGET)  # numbers in the true standard, labelled BJD_TDB
        rows.append((epochs, obs, sigma, f"source {k}", given))
    return TimingTable(np.concatenate([r[1] for r in rows]), np.concatenate([np.full(20, r[2] / 86400) for r in rows]),
                       epoch=np.concatenate([r[0] for r in rows]),
                       source=np.concatenate([[r[3]] * 20 for r in rows]),
                       given_standard="BJD_TDB", target=TARGET)


def test_planted_utc_source_is_caught():
    table = compilation(np.random.default_rng(3), mislabel=(2, "BJD_UTC"), modulation_s=40.0)
    found = suspect_standards(table)
    assert [s.source for s in found] == ["source 2"]
    assert found[0].likely_standard == "BJD_UTC"
    assert found[0].relabel_shift_s == pytest.approx(66.2, abs=3.5)  # 65.184-69.184 s over the span


def test_planted_hjd_utc_source_is_caught():
    table = compilation(np.random.default_rng(4), mislabel=(0, "HJD_UTC"))
    found = suspect_standards(table)
    assert [s.source for s in found] == ["source 0"]
    # HJD_UTC and BJD_UTC differ by <= ~4 s, below this source's ~5-s offset
    # error: either name is an honest answer.
    assert found[0].likely_standard in ("HJD_UTC", "BJD_UTC")


def test_hjd_labelled_bjd_is_caught_with_precise_times():
    # 0.5-s timings: the few-second HJD-BJD difference (Eastman et al. 2010)
    # is now many sigma, and the frame must be named.
    table = compilation(np.random.default_rng(5), mislabel=(1, "HJD_TDB"), sigma=0.5)
    found = suspect_standards(table)
    assert [s.source for s in found] == ["source 1"]
    assert found[0].likely_standard == "HJD_TDB"
    assert 0.2 < abs(found[0].relabel_shift_s) < 4.5


def test_demo_planted_source(demo_table):
    found = demo_table.check_standards()
    assert [s.source for s in found] == ["Meridian 1.2-m photometry"]


def test_false_alarms_are_rare():
    # 40 clean compilations with a 40-s modulation: a false alarm in more than
    # 2 of them would mean the 4-sigma threshold is not doing its job
    # (expected rate at 4 sigma for 5 sources ~ 3e-4 per table if Gaussian).
    alarms = sum(bool(suspect_standards(compilation(np.random.default_rng(100 + i), modulation_s=40.0)))
                 for i in range(40))
    assert alarms <= 2


def test_offsets_are_reported_for_every_source(demo_table):
    offsets = source_offsets(demo_table)
    assert len(offsets) == len(demo_table.sources)
    assert all(o.error_s > 0 for o in offsets)
