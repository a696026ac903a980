"""Generated files (random column orders, sizes, layouts and garbage): each one ends
as a Trace or an InputError, never as another exception."""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from logbook.errors import InputError
from logbook.ingest import read_table, trace_from_table
from logbook.ingest.convert import AxisInfo, trace_from_profile
from logbook.ingest.profiles import profile_from_dict
from logbook.trace import Trace

HEADERS = {
    "time": ["t [s]", "time (ms)", "Timestamp", "t"],
    "setpoint": ["setpoint [mm]", "target", "SP", "command [deg]"],
    "feedback": ["position [mm]", "angle", "y", "velocity [rpm]"],
    "effort": ["effort [V]", "duty", "u"],
    "spare": ["temperature", "note", "ch7"],
}
GARBAGE = ["abc", "", "1,2", "1.2.3", "nan", "inf", "-1e400", "0x10", '"', "\x00", "1e13", "  "]


@st.composite
def capture_files(draw: st.DrawFn) -> bytes:
    """A capture file, well formed or broken in one or more ways."""
    optional = draw(st.lists(st.sampled_from(["effort", "spare", "feedback"]), max_size=2))
    roles = draw(st.permutations(["time", "setpoint", "feedback", *optional]))
    if draw(st.integers(0, 4)) == 0:  # sometimes a role is missing
        roles = roles[1:]
    names: list[str] = []
    for role in roles:
        names.append(draw(st.sampled_from([h for h in HEADERS[role] if h not in names])))
    rows = draw(st.integers(min_value=0, max_value=30))
    delimiter = draw(st.sampled_from([",", ";", "\t"]))
    decimal = draw(st.sampled_from([".", ","])) if delimiter != "," else "."
    values = np.round(
        draw(st.floats(-1e3, 1e3)) + np.arange(rows)[:, None] * 0.01 + np.zeros((1, len(names))), 4
    )
    lines = [delimiter.join(f'"{n}"' if draw(st.booleans()) else n for n in names)]
    lines += [delimiter.join(f"{v}".replace(".", decimal) for v in row) for row in values]
    for _ in range(draw(st.sampled_from([0, 0, 0, 1, 1, 2, 3]))):  # damage
        if len(lines) < 2:
            break
        at = draw(st.integers(min_value=0, max_value=len(lines) - 1))
        kind = draw(st.sampled_from(["cell", "truncate", "drop", "swap", "blank", "extra"]))
        cells = lines[at].split(delimiter)
        if kind == "cell":
            cells[draw(st.integers(0, len(cells) - 1))] = draw(st.sampled_from(GARBAGE))
            lines[at] = delimiter.join(cells)
        elif kind == "truncate":
            lines[at] = delimiter.join(cells[: draw(st.integers(0, len(cells) - 1))])
        elif kind == "drop":
            del lines[at]
        elif kind == "swap" and at + 1 < len(lines):
            lines[at], lines[at + 1] = lines[at + 1], lines[at]
        elif kind == "blank":
            lines.insert(at, "")
        else:
            lines[at] += delimiter + "9"
    metadata = draw(
        st.lists(
            st.sampled_from(["# axis: x", "# note", "# date: 2024", "#"]), max_size=3, unique=True
        )
    )
    text = "\n".join(metadata + lines) + draw(st.sampled_from(["", "\n", "\n\n"]))
    data = text.encode("utf-8")
    if draw(st.booleans()):
        data = b"\xef\xbb\xbf" + data
    if draw(st.integers(0, 9)) == 0:
        cut = draw(st.integers(0, len(data)))
        data = data[:cut] + draw(st.binary(max_size=20)) + data[cut:]
    return data


def outcome(path: Path) -> Trace | InputError:
    """What the reader makes of ``path``: a plain trace and a profile trace, or an error."""
    try:
        table = read_table(path)
        plain = trace_from_table(table)
        time, setpoint, feedback = (c.name for c in plain.channels[:3])
        profile = profile_from_dict(
            {
                "name": "p",
                "axis": "x",
                "time_column": time,
                "setpoint_column": setpoint,
                "feedback_column": feedback,
                "feedback_signal": "counts",
                "speed": True,
            }
        )
        trace_from_profile(table, profile, AxisInfo("x", "mm", 1000, 5.0))
        return plain
    except InputError as exc:
        return exc


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=capture_files(), suffix=st.sampled_from([".csv", ".tsv", ".txt"]))
def test_generated_files_end_as_trace_or_input_error(data: bytes, suffix: str) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / f"capture{suffix}"
        path.write_bytes(data)
        result = outcome(path)
    if isinstance(result, InputError):
        assert result.file == str(path) and "\n" not in str(result)
    else:
        assert len(result) >= 3
        assert np.all(np.diff(result.time) > 0)


TOKENS = [
    *',;\t\r\n"0123456789.eE-+ #:',
    "nan",
    "inf",
    "t",
    "setpoint",
    "position",
    "[s]",
    "\ufeff",
    "é",
    "\x00",
]


@settings(max_examples=100, deadline=None)
@given(text=st.lists(st.sampled_from(TOKENS), max_size=200).map("".join))
def test_text_soup_ends_as_trace_or_input_error(text: str) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "soup.csv"
        path.write_bytes(text.encode("utf-8"))
        result = outcome(path)
        assert isinstance(result, Trace) or (result.file == str(path) and "\n" not in str(result))


@settings(max_examples=50, deadline=None)
@given(data=st.binary(max_size=400))
def test_random_bytes_end_as_trace_or_input_error(data: bytes) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        for suffix in (".csv", ".parquet"):
            path = Path(tmp) / f"junk{suffix}"
            path.write_bytes(data)
            result = outcome(path)
            assert isinstance(result, Trace) or result.file == str(path)
