"""Survey inputs and bookkeeping without a cluster: manifests, folders, bad input, injected executors.

These are checks of ttvkit's own file handling and of the executor protocol (``submit``/``map``, as in
``concurrent.futures``, Python standard library); no outside value applies.
"""

import json
import warnings
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest
from survey.invented import write_targets

from ttvkit.cli.main import main
from ttvkit.errors import InputError, OutputExistsError, TtvkitWarning
from ttvkit.survey import MARKER, SurveyTarget, read_manifest, run_survey, targets_from_folder
from ttvkit.survey.summary import summary_frame
from ttvkit.survey.task import failure_row


@pytest.fixture
def inputs(tmp_path):
    return write_targets(tmp_path / "in", 3, n_points=12)


def _manifest(path: Path, text: str) -> Path:
    path.write_text(text)
    return path


def test_manifest_reads_paths_and_options(inputs):
    text = inputs.read_text().splitlines()
    lines = [text[0] + ",sampled,seed,hypotheses"] + [line + ",no,3,constant-period;orbital-decay"
                                                       for line in text[1:]]
    targets = read_manifest(_manifest(inputs, "\n".join(lines) + "\n"))
    assert [t.name for t in targets] == ["Quillon-000", "Quillon-001", "Quillon-002"]
    assert targets[0].table == inputs.parent / "Quillon-000.ecsv"
    assert targets[1].options == {"sampled": False, "seed": 3,
                                  "hypotheses": ("constant-period", "orbital-decay")}


@pytest.mark.parametrize("text, where", [
    ("target,table\nA,Quillon-000.ecsv\n", "column 'system'"),
    ("target,table,system\nA,Quillon-000.ecsv,Quillon-000.toml\na,Quillon-001.ecsv,Quillon-001.toml\n",
     "row 2, column 'target'"),
    ("target,table,system\nA,nowhere.ecsv,Quillon-000.toml\n", "row 1, column 'table'"),
    ("target,table,system,seed\nA,Quillon-000.ecsv,Quillon-000.toml,3.5\n", "row 1, column 'seed'"),
    ("target,table,system\n../up,Quillon-000.ecsv,Quillon-000.toml\n", "row 1, column 'target'"),
    ("target,table,system,colour\nA,Quillon-000.ecsv,Quillon-000.toml,red\n", "unknown column(s) colour"),
])
def test_bad_manifest_names_file_row_and_column(inputs, text, where):
    path = _manifest(inputs.parent / "bad.csv", text)
    with pytest.raises(InputError, match="bad.csv") as info:
        read_manifest(path)
    assert where in str(info.value)


def test_folder_pairs_tables_with_system_files(inputs):
    folder = inputs.parent
    (folder / "Quillon-002.toml").unlink()
    with pytest.warns(TtvkitWarning, match="Quillon-002"):
        targets = targets_from_folder(folder)
    assert [t.name for t in targets] == ["Quillon-000", "Quillon-001"]


def test_refuses_a_folder_that_is_not_a_survey(inputs, tmp_path):
    other = tmp_path / "papers"
    other.mkdir()
    (other / "draft.tex").write_text("mine")
    with pytest.raises(OutputExistsError, match=MARKER):
        run_survey(inputs, other, progress=False, say=lambda *a: None)
    assert [p.name for p in other.iterdir()] == ["draft.tex"]


def _broken_targets(inputs, n=2):
    folder = inputs.parent
    for i in range(n):
        (folder / f"bad{i}.ecsv").write_text("# %ECSV 1.0\n# ---\nnot a table\n")
    return [SurveyTarget(f"bad{i}", folder / f"bad{i}.ecsv", folder / "Quillon-000.toml") for i in range(n)]


class _MapOnly:
    """An executor with only ``map`` (like ``multiprocessing.Pool`` or the built-in map)."""

    def map(self, fn, *iterables):
        return map(fn, *iterables)


@pytest.mark.parametrize("make", [lambda: ThreadPoolExecutor(2), _MapOnly])
def test_injected_executors_record_failures_and_go_on(inputs, tmp_path, make):
    targets = _broken_targets(inputs)
    executor = make()
    run = run_survey(targets, tmp_path / "out", executor=executor, progress=False, say=lambda *a: None)
    assert (run.ran, run.failed) == (2, 2)
    assert list(run.summary["status"]) == ["failed", "failed"]
    assert all("bad" in e and "ECSV" in e for e in run.summary["error"])
    assert (tmp_path / "out" / "summary.ecsv").is_file() and (tmp_path / "out" / "index.html").is_file()


def test_a_task_that_raises_in_the_executor_becomes_a_failure_row(inputs, tmp_path):
    class Exploding(ThreadPoolExecutor):
        def submit(self, fn, *args, **kwargs):
            def boom(*a, **k):
                raise MemoryError("worker lost")
            return super().submit(boom, *args, **kwargs)

    with Exploding(1) as executor:
        run = run_survey(_broken_targets(inputs, 1), tmp_path / "out", executor=executor, progress=False,
                         say=lambda *a: None)
    assert run.summary["error"].iloc[0] == "MemoryError: worker lost"


def test_summary_frame_unions_hypotheses():
    rows = [failure_row("A", InputError("x")),
            {"target": "B", "status": "done", "error": "", "n_points": 9, "best": "h1", "best_verdict": "v",
             "summary": "", "hypotheses": {"h1": {"verdict": "v", "delta_bic": 0.0}},
             "numbers": {"dP_dt": {"value": -3.0, "lower": 1.0, "upper": 2.0, "unit": "ms/yr"}},
             "warnings": ["w1", "w2"], "report": "targets/B/report.html", "thumbnail": ""}]
    frame = summary_frame(rows)
    assert list(frame["target"]) == ["A", "B"]
    assert frame["dP_dt_err"].iloc[1] == 1.5 and frame["warnings"].iloc[1] == "w1 | w2"
    assert frame["verdict[h1]"].iloc[0] == "" and frame.attrs["units"]["dP_dt"] == "ms/yr"


def test_cli_bad_manifest_is_one_line_and_status_2(inputs, tmp_path, capsys):
    bad = _manifest(inputs.parent / "bad.csv", "target,table\nA,x\n")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        status = main(["survey", str(bad), "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err.strip()
    assert status == 2 and len(err.splitlines()) == 1 and "column 'system'" in err


def test_calibration_per_target_equals_a_single_target_calibration(inputs, tmp_path):
    # The survey's calibration of a target must be the calibration one would run on that target
    # alone with the target's hypotheses (same options and seed: the same simulated tables), and a
    # survey finished without that calibration (none, or other settings) runs its targets again.  Small counts keep the test fast; the
    # rates themselves are checked in tests/diagnosis (injection-recovery against known truth).
    from dataclasses import replace

    from survey.invented import TEST_HYPOTHESES

    from ttvkit.diagnosis import DiagnosisOptions
    from ttvkit.diagnosis.calibration import CalibrationOptions, calibrate
    from ttvkit.survey.task import read_target

    targets = read_manifest(inputs)[:1]
    options = DiagnosisOptions(sampled=False, hypotheses=TEST_HYPOTHESES, now=2461000.5, progress=False)
    out = tmp_path / "out"
    first = run_survey(targets, out, options, executor=_MapOnly(), progress=False, say=lambda *a: None)
    assert first.ran == 1 and "false_alarm_rate" not in first.summary.columns
    calibration = CalibrationOptions(n_null=6, n_per_amplitude=3, amplitudes=(3.0, 8.0), seed=5)
    run = run_survey(targets, out, options, executor=_MapOnly(), progress=False, say=lambda *a: None,
                     calibration=calibration)
    assert (run.ran, run.skipped, run.failed) == (1, 0, 0)
    for i, target in enumerate(targets):
        written = json.loads((out / "calibration" / f"{target.name}.json").read_text())
        alone = calibrate(read_target(target)[0], replace(calibration, hypotheses=TEST_HYPOTHESES),
                          executor=_MapOnly(), progress=False)
        assert written == json.loads(json.dumps(alone.to_dict()))
        assert run.summary["false_alarm_rate"].iloc[i] == alone.false_alarms["any"]
        assert run.summary["calibration"].iloc[i] == f"calibration/{target.name}.json"
        # the target's verdict fits TEST_HYPOTHESES: so do the simulated tables
        assert written["settings"]["hypotheses"] == list(dict.fromkeys(("constant-period",) + TEST_HYPOTHESES))
    found = run.summary["decay_found_half_the_time"]
    assert (found.isna() | (found < 0)).all()    # a decay: a shrinking period, in ms/yr
    assert "false_alarm_rate_err" not in run.summary.columns   # no error column for numbers without errors
    assert "false alarms" in (out / "index.html").read_text()
    again = run_survey(targets, out, options, executor=_MapOnly(), progress=False, say=lambda *a: None,
                       calibration=calibration)
    assert (again.ran, again.skipped) == (0, 1)
    other = replace(calibration, n_null=7)    # other settings: the calibration is redone, not kept
    third = run_survey(targets, out, options, executor=_MapOnly(), progress=False, say=lambda *a: None,
                       calibration=other)
    assert (third.ran, third.skipped) == (1, 0)
    assert json.loads((out / "calibration" / f"{targets[0].name}.json").read_text())["n_null"] == 7


def test_cli_refuses_a_calibration_too_small_to_mean_anything(inputs, tmp_path, capsys):
    assert main(["survey", str(inputs), "--out", str(tmp_path / "out"), "--calibrate", "3"]) == 2
    err = capsys.readouterr().err
    assert "--calibrate 3" in err and "at least 10" in err and "Traceback" not in err


def test_a_failed_calibration_leaves_the_diagnosis_standing(inputs, tmp_path, monkeypatch):
    from survey.invented import TEST_HYPOTHESES

    import ttvkit.diagnosis.calibration as calibration_module
    from ttvkit.diagnosis import DiagnosisOptions
    from ttvkit.diagnosis.calibration import CalibrationOptions

    def broken(*args, **kwargs):
        raise RuntimeError("simulated tables could not be drawn")

    monkeypatch.setattr(calibration_module, "calibrate", broken)
    options = DiagnosisOptions(sampled=False, hypotheses=TEST_HYPOTHESES, now=2461000.5, progress=False)
    run = run_survey(read_manifest(inputs)[:1], tmp_path / "out", options, executor=_MapOnly(), progress=False,
                     say=lambda *a: None, calibration=CalibrationOptions(n_null=10, n_per_amplitude=0))
    row = run.summary.iloc[0]
    assert row["status"] == "done" and row["best"] and "calibration" not in run.summary.columns
    assert not list((tmp_path / "out" / "calibration").iterdir())
    assert "the calibration failed: simulated tables could not be drawn" in row["warnings"]
