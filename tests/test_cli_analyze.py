"""``logbook analyze``: the scripted contract, the table, and bad files in a batch.

Reference values: the first-order formulas (10-90 % rise tau*ln 9, 2 % settling
tau*ln 50, 5 % settling tau*ln 20, 20-80 % rise tau*ln 4), which follow from
y = 1 - exp(-t/tau); times within one sample period.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from logbook.analysis import METRICS, analyze_arrays
from logbook.cli import main

TAU = 0.05
DT = 1e-3
T0 = 1000.0  # the clock of a capture may start anywhere
T_STEP = T0 + 0.1
CONTRACT_KEYS = (
    "t_step_s",
    "initial",
    "final",
    "rise_time_s",
    "overshoot_pct",
    "peak_time_s",
    "settling_time_s",
    "steady_state_error",
)


def _first_order_columns(rows: int = 1000, low: float = 2.0, high: float = 4.0):
    t = T0 + DT * np.arange(rows)
    sp = np.where(t >= T_STEP - DT / 2, high, low)
    y = low + (high - low) * (1.0 - np.exp(-np.maximum(t - T_STEP, 0.0) / TAU))
    return t, sp, y


def _write(path: Path, header: str, columns, *, metadata: str = "") -> Path:
    body = "\n".join(",".join(f"{v:.9g}" for v in row) for row in zip(*columns, strict=True))
    path.write_text(metadata + header + "\n" + body + "\n", encoding="utf-8")
    return path


def _capture(tmp_path: Path, name: str = "run.csv") -> Path:
    metadata = "# axis: x-stage\n# revision: B\n# gains: soft\n"
    return _write(
        tmp_path / name,
        "t [s],setpoint [mm],position [mm]",
        _first_order_columns(),
        metadata=metadata,
    )


def _invoke(*args: str):
    return CliRunner().invoke(main, ["analyze", *args])


def _json_lines(output: str) -> list[dict]:
    return [json.loads(line) for line in output.splitlines()]


def test_json_contract(tmp_path):
    path = _capture(tmp_path)
    result = _invoke(str(path), "--json")
    assert result.exit_code == 0, result.output
    (record,) = _json_lines(result.stdout)
    assert record["file"] == str(path)
    assert record["error"] is None
    (step,) = record["steps"]
    assert set(CONTRACT_KEYS) <= set(step)
    assert list(step) == list(METRICS)
    assert step["t_step_s"] == pytest.approx(T_STEP, abs=1e-9)
    assert step["initial"] == 2.0
    assert step["final"] == pytest.approx(4.0, abs=1e-6)
    assert step["rise_time_s"] == pytest.approx(TAU * math.log(9), abs=DT)
    assert step["settling_time_s"] == pytest.approx(TAU * math.log(50), abs=DT)
    assert step["steady_state_error"] == pytest.approx(0.0, abs=1e-6)
    assert step["peak_time_s"] is None or step["peak_time_s"] > 0  # null or a time
    assert step["saturation_time_s"] is None  # no effort column


def test_json_equals_the_library_on_the_same_columns(tmp_path):
    path = _capture(tmp_path)
    (record,) = _json_lines(_invoke(str(path), "--json").stdout)
    t, sp, y = (np.array([float(f"{v:.9g}") for v in c]) for c in _first_order_columns())
    assert record["steps"] == analyze_arrays(t, sp, y).to_json()


@pytest.mark.parametrize(
    ("args", "name", "expected"),
    [
        (["--band", "5"], "settling_time_s", TAU * math.log(20)),
        (["--rise", "20-80"], "rise_time_s", TAU * math.log(4)),
    ],
)
def test_band_and_rise_options(tmp_path, args, name, expected):
    result = _invoke(str(_capture(tmp_path)), "--json", *args)
    (record,) = _json_lines(result.stdout)
    assert record["steps"][0][name] == pytest.approx(expected, abs=DT)


def test_files_in_input_order_and_flags_win_over_names(tmp_path):
    t, sp, y = _first_order_columns()
    # Two feedback-like columns: by name the first ("position") is taken; the flag
    # picks the second, which settles 1 mm higher.
    two = _write(tmp_path / "two.csv", "time,target,position,encoder", (t, sp, y, y + 1.0))
    one = _capture(tmp_path, "one.csv")
    by_name = _json_lines(_invoke(str(two), str(one), "--json").stdout)
    assert [r["file"] for r in by_name] == [str(two), str(one)]
    assert by_name[0]["steps"][0]["final"] == pytest.approx(4.0, abs=1e-6)
    flagged = _json_lines(_invoke(str(two), "--feedback", "encoder", "--json").stdout)
    assert flagged[0]["steps"][0]["final"] == pytest.approx(5.0, abs=1e-6)


def test_multi_step_file(tmp_path):
    t = DT * np.arange(3000)
    sp = np.select([t < 0.5, t < 1.5], [0.0, 1.0], default=-1.0)
    y = np.zeros_like(t)
    for when, jump in ((0.5, 1.0), (1.5, -2.0)):
        y += jump * (1.0 - np.exp(-np.maximum(t - when, 0.0) / TAU))
    path = _write(tmp_path / "multi.csv", "t [s],setpoint [deg],angle [deg]", (t, sp, y))
    (record,) = _json_lines(_invoke(str(path), "--json").stdout)
    assert [s["t_step_s"] for s in record["steps"]] == pytest.approx([0.5, 1.5], abs=1e-9)
    assert [s["rise_time_s"] for s in record["steps"]] == pytest.approx(
        [TAU * math.log(9)] * 2, abs=DT
    )


def test_table_output(tmp_path):
    path = _capture(tmp_path)
    result = _invoke(str(path))
    assert result.exit_code == 0
    lines = result.stdout.splitlines()
    assert lines[0] == f"{path}: 1 step(s)"
    assert lines[1].split() == ["figure", "unit", "step", "0"]
    rise = next(line for line in lines if line.startswith("rise_time_s "))
    assert rise.split()[1] == "s"
    assert float(rise.split()[2]) == pytest.approx(TAU * math.log(9), abs=DT)
    assert next(line for line in lines if line.startswith("final ")).split()[1] == "mm"
    # Undetermined figures are listed with the reason.
    assert "step 0 saturation_time_s: no effort channel" in result.stdout


def _bad_files(tmp_path: Path) -> dict[str, tuple[Path, str]]:
    """name -> (file, expected message fragment)."""
    t, sp, y = _first_order_columns(rows=300)
    header = "t [s],setpoint [mm],position [mm]"
    bad_nan = _write(tmp_path / "nan.csv", header, (t, sp, y))
    lines = bad_nan.read_text().splitlines()
    lines[11] = lines[11].rsplit(",", 1)[0] + ",nan"
    bad_nan.write_text("\n".join(lines) + "\n")
    bad_text = tmp_path / "text.csv"
    bad_text.write_text(bad_nan.read_text().replace(",nan", ",abc"))
    backwards = t.copy()
    backwards[20] = backwards[18]
    duplicate = t.copy()
    duplicate[20] = duplicate[19]
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    return {
        "empty": (empty, f"{empty}: empty file"),
        "one sample": (
            _write(tmp_path / "one.csv", header, (t[:1], sp[:1], y[:1])),
            "only 1 data rows",
        ),
        "no step": (
            _write(tmp_path / "flat.csv", header, (t, np.full(300, 2.0), y)),
            "column 'setpoint [mm]': no step",
        ),
        "constant feedback": (
            _write(tmp_path / "stuck.csv", header, (t, sp, np.full(300, 2.0))),
            "column 'position [mm]': constant feedback",
        ),
        "NaN": (bad_nan, "line 12, column 'position [mm]': missing value (NaN)"),
        "non-numeric": (bad_text, "line 12, column 'position [mm]': text 'abc'"),
        "backwards": (
            _write(tmp_path / "back.csv", header, (backwards, sp, y)),
            "line 22, column 't [s]': time goes backwards",
        ),
        "duplicate": (
            _write(tmp_path / "dup.csv", header, (duplicate, sp, y)),
            "line 22, column 't [s]': duplicate timestamp",
        ),
        "missing column": (
            _write(tmp_path / "nofb.csv", "t [s],setpoint [mm],temp [C]", (t, sp, y)),
            "no feedback column found",
        ),
        "no such file": (tmp_path / "absent.csv", "cannot open the file"),
    }


def test_bad_files_are_reported_and_the_batch_goes_on(tmp_path):
    good = _capture(tmp_path, "good.csv")
    bad = _bad_files(tmp_path)
    paths = [str(good)] + [str(path) for path, _ in bad.values()] + [str(good)]
    result = _invoke(*paths, "--json")
    assert result.exit_code == 1
    assert "Traceback" not in result.stderr
    errors = result.stderr.splitlines()
    assert len(errors) == len(bad)
    for line, (name, (path, fragment)) in zip(errors, bad.items(), strict=True):
        assert line.startswith(f"Error: {path}"), name
        assert fragment in line, name
    records = _json_lines(result.stdout)
    assert [r["file"] for r in records] == paths
    assert records[0]["steps"] and records[-1]["steps"]
    assert all(r["steps"] is None and r["error"] for r in records[1:-1])


def test_large_batch_on_worker_processes_keeps_order(tmp_path):
    # From 16 files on the batch is spread over worker processes.
    t, sp, y = _first_order_columns()
    paths = []
    for k in range(20):
        columns = (t, sp, y) if k != 7 else (t, np.full(len(t), 2.0), y)
        paths.append(str(_write(tmp_path / f"run{k:02d}.csv", "t,setpoint,position", columns)))
    result = _invoke(*paths, "--json")
    assert result.exit_code == 1
    records = _json_lines(result.stdout)
    assert [r["file"] for r in records] == paths
    assert records[7]["steps"] is None and "no step" in records[7]["error"]
    rises = [r["steps"][0]["rise_time_s"] for k, r in enumerate(records) if k != 7]
    assert rises == pytest.approx([TAU * math.log(9)] * 19, abs=DT)


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--rise", "ten-ninety"], "LOW-HIGH"),
        (["--rise", "90-10"], "rise limits"),
        (["--band", "0"], "settling band"),
    ],
)
def test_bad_options_are_usage_errors(tmp_path, args, message):
    result = _invoke(str(_capture(tmp_path)), *args)
    assert result.exit_code == 2
    assert message in result.stderr


def test_help_has_an_example():
    result = CliRunner().invoke(main, ["analyze", "--help"])
    assert result.exit_code == 0
    assert "Example: logbook analyze" in result.output
