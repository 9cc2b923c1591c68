"""Issue 10 item 11: ``bracewalk check`` on odd input: one clear line and exit 2, never a traceback."""

import json
import subprocess
import sys
from pathlib import Path

import pytest

from mobile.cli import MAX_INPUT_BYTES, main
from tests.core.beams import glulam

ROOT = Path(__file__).resolve().parents[2]
BEAM = glulam().model_dump(mode="json")


def check(tmp_path, capsys, data):
    path = tmp_path / "beam.json"
    path.write_bytes(data if isinstance(data, bytes) else json.dumps(data).encode())
    code = main(["check", str(path)])
    out, err = capsys.readouterr()
    assert "Traceback" not in err
    return code, out, err


def with_(**over):
    return dict(BEAM, **over)


def test_utf8_byte_order_mark_accepted(tmp_path, capsys):
    code, out, _ = check(tmp_path, capsys, b"\xef\xbb\xbf" + json.dumps(BEAM).encode())
    assert code == 0
    assert json.loads(out)


def test_latin1_read_and_named(tmp_path, capsys):
    code, _out, err = check(tmp_path, capsys, json.dumps(with_(mark="Poutre é"), ensure_ascii=False).encode("latin-1"))
    assert code == 0
    assert "Latin-1" in err


@pytest.mark.parametrize(
    ("data", "words"),
    [
        (with_(treatment="incised"), "incised"),
        (json.dumps(BEAM).replace('"b_mm": 130.0', '"b_mm": ' + "9" * 4300).encode(), "digits"),
        (b"[" * 5000 + b"]" * 5000, "nested"),
        (with_(d_mm=1e-150), "d_mm"),
        (with_(b_mm=1e-150), "b_mm"),
        (with_(spans_mm=[1], top_edge={"braced_by": "none"}), "spans_mm"),
        (with_(b_mm=1, d_mm=1), "b_mm"),
        (json.dumps(BEAM).replace("2.0", "NaN", 1).encode(), "finite"),
        (json.dumps(BEAM).replace("2.0", "Infinity", 1).encode(), "finite"),
        (b" " * (MAX_INPUT_BYTES + 1), "larger than"),
    ],
    ids=["incised-glulam", "4300-digits", "deep", "d-tiny", "b-tiny", "span-1mm", "section-1mm", "nan", "inf", "big"],
)
def test_refused_with_one_clear_line(tmp_path, capsys, data, words):
    code, _, err = check(tmp_path, capsys, data)
    assert code == 2, err
    assert words in err
    assert len(err.strip().splitlines()) == 1


def test_tiny_bearing_never_prints_infinity(tmp_path, capsys):
    bearings = [dict(BEAM["bearings"][0], length_mm=5e-324), BEAM["bearings"][1]]
    code, out, err = check(tmp_path, capsys, with_(bearings=bearings))
    assert code == 2
    assert "length_mm" in err
    assert "Infinity" not in out


def test_output_into_a_closed_pipe(tmp_path):
    (tmp_path / "b.json").write_text(json.dumps(BEAM))
    proc = subprocess.run(
        f"{sys.executable} -m mobile.cli check {tmp_path / 'b.json'} | head -c 1",
        shell=True,
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert "Traceback" not in proc.stderr
    assert "BrokenPipe" not in proc.stderr


@pytest.mark.parametrize("field", ["overhang_left_mm", "overhang_right_mm"])
def test_tiny_overhang_refused_not_divided_by(tmp_path, capsys, field):
    code, _, err = check(tmp_path, capsys, with_(**{field: 1e-150}))
    assert code == 2
    assert field in err
