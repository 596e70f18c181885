"""The command line: exit codes, one-line errors, JSON output, no tracebacks."""

import json
import subprocess
import sys

import pytest

from ttvkit.cli import main


def run(argv, capsys):
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


def test_version_and_help(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--version"])
    assert info.value.code == 0
    assert "ttvkit" in capsys.readouterr().out
    for cmd in ("convert", "demo", "budget", "fit", "compare", "diagnose", "perturbers"):
        with pytest.raises(SystemExit):
            main([cmd, "--help"])
        assert "examples:" in capsys.readouterr().out


def test_convert_demo_table(tmp_path, demo_inputs, capsys):
    out = tmp_path / "t.ecsv"
    code, stdout, err = run(["convert", str(demo_inputs["timings"]), "--ra", "287.41", "--dec", "31.18",
                             "--out", str(out), "--json"], capsys)
    assert code == 0
    summary = json.loads(stdout)
    assert summary["n_points"] == 99
    assert [w["source"] for w in summary["warnings"]] == ["Meridian 1.2-m photometry"]
    assert "Meridian" in err
    assert out.exists()


BAD_TABLES = {
    "missing.csv": "epoch,uncertainty\n0,0.001\n",
    "nan.csv": "epoch,time,uncertainty\n0,nan,0.001\n",
    "negative.csv": "epoch,time,uncertainty\n0,2456000.0,-0.001\n",
    "mjd.csv": "epoch,time,uncertainty\n0,56000.0,0.001\n",  # an MJD labelled BJD_TDB (issue 13)
    "kind.csv": "epoch,time,uncertainty,kind\n0,2456000.0,0.001,flare\n",
    "std.csv": "epoch,time,uncertainty,standard\n0,2456000.0,0.001,GPS\n",
    "unit.csv": "epoch,time,uncertainty [zz]\n0,2456000.0,0.001\n",
    "empty.csv": "",
    "mixed.csv": "epoch,time,uncertainty,standard\n0,2456000.0,0.001,BJD\n",
}


@pytest.mark.parametrize("name", sorted(BAD_TABLES))
def test_bad_input_exit_2_one_line(tmp_path, capsys, name):
    p = tmp_path / name
    p.write_text(BAD_TABLES[name])
    out = tmp_path / "o.ecsv"
    code, stdout, err = run(["convert", str(p), "--standard", "BJD_TDB", "--out", str(out)], capsys)
    assert code == 2
    assert len(err.strip().splitlines()) == 1
    assert name in err and "Traceback" not in err
    assert not out.exists()


def test_binary_input(tmp_path, capsys):
    p = tmp_path / "b.csv"
    p.write_bytes(b"\x00\x01\x02" * 100)
    code, _, err = run(["convert", str(p), "--standard", "BJD_TDB", "--out", str(tmp_path / "o.ecsv")], capsys)
    assert code == 2 and "binary" in err


def test_existing_output_needs_force(tmp_path, demo_inputs, capsys):
    out = tmp_path / "t.ecsv"
    out.write_text("keep me")
    args = ["convert", str(demo_inputs["timings"]), "--ra", "287.41", "--dec", "31.18", "--out", str(out)]
    code, _, err = run(args, capsys)
    assert code == 2 and "--force" in err
    assert out.read_text() == "keep me"
    assert run(args + ["--force"], capsys)[0] == 0


def test_demo_refuses_non_empty_folder(tmp_path, capsys):
    (tmp_path / "x").write_text("")
    code, _, err = run(["demo", "--out", str(tmp_path)], capsys)
    assert code == 2 and "not empty" in err


def test_console_script_no_traceback(tmp_path):
    p = tmp_path / "bad.csv"
    p.write_text("time,uncertainty\nabc,1\n")
    res = subprocess.run([sys.executable, "-m", "ttvkit.cli", "convert", str(p), "--standard", "BJD_TDB",
                          "--ephemeris", "2456000,1.5", "--out", str(tmp_path / "o.ecsv")],
                         capture_output=True, text=True)
    assert res.returncode == 2
    assert "Traceback" not in res.stderr
    assert "row 1, column 'time'" in res.stderr


def test_budget_json(demo_inputs, capsys):
    code, out, _ = run(["budget", "--system", str(demo_inputs["system"]), "--amplitude", "50s",
                        "--modulation-period", "9.5yr", "--json"], capsys)
    assert code == 0
    data = json.loads(out)
    for model in ("thin shell", "finite shell"):
        entry = data["models"][model]
        for key in ("delta_P_over_P", "delta_J", "delta_E", "energy_ratio", "delta_L_over_L",
                    "delta_Omega_over_Omega", "max_amplitude"):
            assert key in entry
        import astropy.units as u
        assert u.Unit(entry["delta_J"]["unit"]) == u.kg * u.m ** 2 / u.s
        assert u.Unit(entry["delta_E"]["unit"]) == u.J
    # dP/P = 2 pi A / P_mod, independent of the model (Applegate 1992)
    assert data["models"]["thin shell"]["delta_P_over_P"] == pytest.approx(2 * 3.141592653589793 * 50 / (9.5 * 365.25 * 86400))


@pytest.mark.parametrize("args,match", [
    (["--amplitude", "50", "--modulation-period", "9yr"], "--amplitude"),
    (["--amplitude", "50s", "--modulation-period", "9 kg"], "--modulation-period"),
    (["--amplitude=-5s", "--modulation-period", "9yr"], "positive"),
])
def test_budget_bad_options(demo_inputs, capsys, args, match):
    code, _, err = run(["budget", "--system", str(demo_inputs["system"])] + args, capsys)
    assert code == 2 and match in err and len(err.strip().splitlines()) == 1


def test_budget_missing_system_value(tmp_path, capsys):
    p = tmp_path / "s.toml"
    p.write_text('[star]\nmass = "0.5 Msun"\nradius = "0.5 Rsun"\n[orbit]\nperiod = "1 d"\n')
    code, _, err = run(["budget", "--system", str(p), "--amplitude", "5s", "--modulation-period", "9yr"], capsys)
    assert code == 2 and "luminosity" in err


def test_demo_runs_the_whole_path(tmp_path, capsys):
    out = tmp_path / "demo"
    code, stdout, _ = run(["demo", "--out", str(out), "--no-sample", "--no-perturbers", "--json"], capsys)
    assert code == 0
    summary = json.loads(stdout)
    assert (out / "diagnosis" / "report.html").exists()
    assert (out / "diagnosis" / "diagnosis.json").exists()
    assert [w["source"] for w in summary["warnings"]] == ["Meridian 1.2-m photometry"]
    # the demo's star (slow rotator, quiet RVs) cannot host the activity or
    # companion explanations of its modulation
    assert summary["verdicts"]["sinusoidal-modulation"] == "physically excluded"
    assert summary["verdicts"]["light-travel-time"] == "physically excluded"


def test_diagnose_errors_are_one_line(tmp_path, demo_inputs, capsys):
    base = ["diagnose", str(demo_inputs["timings"]), "--out", str(tmp_path / "r"), "--no-sample"]
    code, _, err = run(base + ["--system", str(tmp_path / "none.toml")], capsys)
    assert code == 2 and "no such file" in err and len(err.strip().splitlines()) == 1
    code, _, err = run(base + ["--system", str(demo_inputs["system"]), "--relabel", "Nobody=BJD_UTC"], capsys)
    assert code == 2 and "no source 'Nobody'" in err
    assert not (tmp_path / "r").exists()


def test_diagnose_with_light_curves(tmp_path, demo_inputs, capsys):
    curves = sorted(str(p) for k, p in demo_inputs.items() if k.startswith("light_curve:"))
    out = tmp_path / "d"
    code, stdout, _ = run(["diagnose", str(demo_inputs["timings"]), "--system", str(demo_inputs["system"]),
                           "--out", str(out), "--no-sample", "--json", "--relabel", "Meridian 1.2-m photometry=BJD_UTC",
                           "--light-curves", *curves, "--ephemeris", "2456000.31412,1.8734192"], capsys)
    assert code == 0
    d = json.loads(stdout)
    assert d["n_points"] == 99 + len(curves)  # every demo light curve holds one full transit
    assert any(s.endswith(".csv") for s in d["sources"])


def test_a_closed_pipe_is_not_an_internal_error(monkeypatch, capsys, tmp_path):
    # `ttvkit ... | head -1`: the reader leaves, printing raises BrokenPipeError; the command stops
    # quietly (status 0, nothing on stderr) instead of reporting an internal error.
    import sys

    from ttvkit.cli.main import main

    class Closed:
        def write(self, text):
            raise BrokenPipeError(32, "Broken pipe")

        def flush(self):
            pass

    system = tmp_path / "star.toml"
    system.write_text('[star]\nmass = "0.9 Msun"\nradius = "0.9 Rsun"\nteff = "5200 K"\n[orbit]\nperiod = "2 d"\n')
    monkeypatch.setattr(sys, "stdout", Closed())
    status = main(["budget", "--system", str(system), "--amplitude", "30s", "--modulation-period", "10yr"])
    monkeypatch.undo()
    assert status == 0
    assert "internal error" not in capsys.readouterr().err
