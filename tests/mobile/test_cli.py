"""The ``bracewalk`` command line through a subprocess, as a user or tool would run it (contract 1)."""

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "beam_r2_b4.json"


def run(*args, stdin=None):
    return subprocess.run(
        [sys.executable, "-m", "mobile.cli", *args], capture_output=True, text=True, input=stdin, cwd=ROOT, timeout=120
    )


def test_check_valid_beam_prints_contract_json():
    proc = run("check", str(EXAMPLE))
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    assert set(data) >= {"mark", "status", "bending", "shear", "bearing", "deflection", "findings"}
    assert data["mark"] == "R2-B4"


def test_check_bad_input_exit_2_names_field(tmp_path):
    bad = json.loads(EXAMPLE.read_text())
    bad["d_mm"] = -456
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(bad))
    proc = run("check", str(path))
    assert proc.returncode == 2
    assert "d_mm" in proc.stderr
    assert "-456" in proc.stderr
    assert "Traceback" not in proc.stderr


def test_check_not_json_exit_2():
    proc = run("check", "-", stdin="{not json")
    assert proc.returncode == 2
    assert "not valid JSON" in proc.stderr


def test_check_missing_file_exit_2():
    proc = run("check", "/nonexistent/beam.json")
    assert proc.returncode == 2
    assert "cannot read" in proc.stderr


def test_check_text_summary():
    proc = run("check", str(EXAMPLE), "--text")
    assert proc.returncode == 0
    assert "R2-B4: ● OK" in proc.stdout
    assert "engineer of record" in proc.stdout


def test_check_text_says_status_priority_and_finding_in_words_not_codes(tmp_path):
    """The demo's RB-5 (a rotation restraint missing at a bearing) as a reviewer reads it: no stored codes."""
    from mobile.demo.run import load_demo
    from storage import Store

    store = Store(tmp_path / "d.db")
    site_id = load_demo(store)
    beam_id = next(i for i, r in store.beams(site_id) if r["mark"] == "RB-5")
    beam = tmp_path / "rb5.json"
    beam.write_text(store.beam(beam_id).model_dump_json())
    proc = run("check", str(beam), "--text")
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.startswith("RB-5: ✖ NOT ESTABLISHED\n")
    assert "  ▲ IMMEDIATE: make safe now · bearing restraint missing\n" in proc.stdout
    for code in ("NOT_ESTABLISHED", "not_established", "bearing_restraint_missing", "[IMMEDIATE]"):
        assert code not in proc.stdout


def test_check_writes_the_recheck_sheet_and_keeps_its_json(tmp_path):
    from pypdf import PdfReader

    out = tmp_path / "R2-B4.pdf"
    proc = run("check", str(EXAMPLE), "--sheet", str(out))
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout)["mark"] == "R2-B4"  # stdout is still contract-1 JSON
    assert f"recheck sheet: {out}" in proc.stderr
    text = "\n".join(p.extract_text() for p in PdfReader(out).pages)
    assert "Recheck sheet: R2-B4, OK" in text
    assert "from beam_r2_b4.json (beam SHA-256" in text  # what it was made from, and with which version
    assert "with bracewalk " in text
    assert "Line loads as given in the beam file." in text
    assert "Checked by" in text
    assert "engineer of record" in text
    proc = run("check", str(EXAMPLE), "--sheet", str(tmp_path / "no-such-folder" / "x.pdf"))
    assert proc.returncode == 2
    assert "cannot write the recheck sheet" in proc.stderr
    assert "Traceback" not in proc.stderr


def test_schema_is_json_schema():
    proc = run("schema")
    assert proc.returncode == 0
    schema = json.loads(proc.stdout)
    assert "spans_mm" in schema["properties"]


def test_check_does_not_import_kivy():
    code = (
        f"import sys, mobile.cli as c; c.main(['check', {str(EXAMPLE)!r}]); "
        "print('KIVY' if 'kivy' in sys.modules else 'NOKIVY')"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert proc.stdout.strip().endswith("NOKIVY")
