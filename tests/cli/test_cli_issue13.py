"""Command-line fixes of issue 13: negative --dec, digits of T0, edits recorded, excess noise, range checks."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from ttvkit.cli.main import main

DATA = Path(__file__).parent.parent / "data"
WASP43 = DATA / "ivshina_winn2022_WASP-043_transit_times.csv"
COLUMNS = ["--column", "time=t_mid", "--column", "uncertainty=uncertainty_days", "--column",
           "standard=time_system", "--column", "source=reference"]


def run(argv, capsys):
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


def test_negative_dec_as_in_the_help(tmp_path, capsys):
    table = tmp_path / "t.csv"
    table.write_text("epoch,time,uncertainty\n0,2456000.5,0.001\n1,2456002.5,0.001\n")
    code, _, err = run(["convert", str(table), "--standard", "HJD_UTC", "--ra", "14:30:12.3", "--dec",
                        "-12:01:02", "--out", str(tmp_path / "o.ecsv")], capsys)
    assert code == 0, err
    assert "-12.017" in (tmp_path / "o.ecsv").read_text()  # -12° 01′ 02″ = -12.0172°


def test_fit_prints_t0_to_its_error_and_records_edits_and_excess_noise(capsys):
    # WASP-43 (Ivshina & Winn 2022): chi2 = 449 for 167 points about a line: overdispersed
    code, out, err = run(["fit", str(WASP43), "--hypothesis", "orbital-decay", "--json", "--ephemeris",
                          "2457423.449697,0.813474037", "--drop-rows", "3,5", *COLUMNS], capsys)
    assert code == 0, err
    d = json.loads(out)
    assert d["table_edits"]["drop_rows"] == [3, 5] and d["n_points"] == 165
    # one jitter per source with >= 10 rows, one for the rest (ttvkit.inference.excess_noise)
    jitters = [name for name in d["parameters"] if name.startswith("jitter")]
    assert d["excess_noise"]["applied"] and jitters == [f"jitter[{g}]" for g in d["excess_noise"]["jitter_groups"]]
    assert len(jitters) > 1 and d["excess_noise"]["jitter_groups"][-1] == "other sources"
    code, out, _ = run(["fit", str(WASP43), "--hypothesis", "orbital-decay", "--ephemeris",
                        "2457423.449697,0.813474037", *COLUMNS], capsys)
    t0_line = next(line for line in out.splitlines() if line.strip().startswith("T0"))
    # T0's error is ~7e-5 d: it must be printed to 1e-6 d (the issue saw 2456000.3)
    assert len(t0_line.split()[1].split(".")[1]) >= 6
    # every value starts in one column, also after a jitter named by a long literature reference
    rows = [line for line in out.splitlines() if line.startswith("    ")]
    names = list(d["parameters"]) + list(d["derived"])
    start = 4 + max(len(n) for n in names) + 1
    assert max(len(n) for n in names) > 24          # the case that broke the column
    assert sorted(line[4:start].strip() for line in rows) == sorted(names)
    assert all(line[start - 1] == " " and line[start] not in " " for line in rows), rows
    code, out, _ = run(["fit", str(WASP43), "--hypothesis", "orbital-decay", "--json", "--no-excess-noise",
                        "--ephemeris", "2457423.449697,0.813474037", *COLUMNS], capsys)
    assert "jitter" not in json.loads(out)["parameters"]


def test_too_few_mid_times_for_a_comparison(tmp_path, capsys):
    table = tmp_path / "t.csv"
    table.write_text("epoch,time,uncertainty\n0,2456000.5,0.001\n1,2456002.5,0.001\n2,2456004.5,0.001\n")
    code, _, err = run(["compare", str(table), "--standard", "BJD_TDB"], capsys)
    assert code == 2 and "a period change needs at least 4 mid-times" in err


@pytest.mark.parametrize("value", ["1.5", "-0.1", "0"])
def test_shell_mass_outside_zero_one(demo_inputs, capsys, value):
    code, out, err = run(["budget", "--system", str(demo_inputs["system"]), "--amplitude", "50s",
                          "--modulation-period", "11yr", "--shell-mass", value], capsys)
    assert code == 2 and "--shell-mass" in err and out == ""


def test_diagnose_negative_years_fails_before_fitting(demo_inputs, tmp_path, capsys):
    code, _, err = run(["diagnose", str(demo_inputs["timings"]), "--system", str(demo_inputs["system"]),
                        "--out", str(tmp_path / "r"), "--years", "-5"], capsys)
    assert code == 2 and "--years -5" in err and not (tmp_path / "r").exists()


def test_system_naming_a_folder(demo_inputs, tmp_path, capsys):
    code, _, err = run(["diagnose", str(demo_inputs["timings"]), "--system", str(tmp_path),
                        "--out", str(tmp_path / "r")], capsys)
    assert code == 2 and "is a folder" in err and "internal error" not in err


def test_intake_warnings_reach_the_json(capsys):
    # TrES-3 (Ivshina & Winn 2022): 19 rows say only "BJD"; told to read them as BJD_TDB, ttvkit warns on
    # stderr and the same words go into the JSON, so a script that keeps only stdout keeps them too.
    tres3 = DATA / "ivshina_winn2022_TrES-3_transit_times.csv"
    code, out, err = run(["fit", str(tres3), "--hypothesis", "constant-period", "--json", "--ephemeris",
                          "2456824.4074,1.30618627", "--bare-bjd", "BJD_TDB", "--drop-rows", "188", *COLUMNS],
                         capsys)
    assert code == 0, err
    warnings = json.loads(out)["table_warnings"]
    assert len(warnings) == 1 and "19 row(s) labelled only 'BJD'" in warnings[0]
    assert "19 row(s) labelled only 'BJD'" in err


def test_diagnose_calibrate_too_few_fails_before_fitting(demo_inputs, tmp_path, capsys):
    code, _, err = run(["diagnose", str(demo_inputs["timings"]), "--system", str(demo_inputs["system"]),
                        "--out", str(tmp_path / "r"), "--calibrate", "5"], capsys)
    assert code == 2 and "--calibrate 5" in err and not (tmp_path / "r").exists()
