"""The demo site gives the statuses and findings its scenario was written to show."""

import os
import subprocess
import sys
from pathlib import Path

from core import recheck
from mobile.demo.run import demo_table, load_demo
from storage import Store
from storage.stamps import local_time
from storage.store import DEMO_FIRM_KEY

ROOT = Path(__file__).resolve().parents[2]

EXPECTED = {
    # mark: (status, finding codes, why)
    "RB-1": ("ok", set(), "purlins at 1.2 m as drawn"),
    "RB-2": ("ok", set(), "purlins at 2.4 m: KL regime (b), still adequate"),
    "RB-3": ("deficient", {"bending_overstress"}, "80 x 608 unbraced over 6 m: CB 33 in regime (c)"),
    "RB-4": ("not_permitted", {"slenderness_exceeds_limit"}, "80 x 912 unbraced over 12 m: CB 57 > 50"),
    "RB-5": ("not_established", {"bearing_restraint_missing"}, "d/b 4.1 > 2.5 and no rotation restraint at support 2"),
    "RB-6": (
        "deficient",
        {"bending_overstress", "compression_edge_unbraced"},
        "hogging zone: Lu runs between real bottom-edge restraints (support to support), not to zero moment",
    ),
    "RB-7": ("deficient", {"substitution"}, "130 x 456 where 130 x 494 is drawn: one lamination short"),
    "RB-8": ("deficient", {"layup_inverted"}, "unbalanced 20f-E with the TOP stamp down"),
    "CB-1": ("ok", set(), "wet service factors applied, adequate"),
    "FJ-1": ("deficient", {"bending_overstress", "compression_edge_unbraced"}, "subfloor not fastened"),
    "FJ-2": ("ok", set(), "subfloor fastened: d/b 6.2 <= 6.5"),
    "FB-1": ("ok", set(), "floor girder adequate"),
    "RP-1": ("ok", set(), "sawn purlin adequate"),
}


def test_demo_statuses_and_findings(tmp_path):
    store = Store(tmp_path / "demo.db")
    site_id = load_demo(store)
    got = {}
    for beam_id, record in store.beams(site_id):
        r = recheck(store.beam(beam_id))
        got[record["mark"]] = (r.status.value, {f.code for f in r.findings})
    assert set(got) == set(EXPECTED)
    for mark, (status, codes, why) in EXPECTED.items():
        assert got[mark] == (status, codes), f"{mark}: {why}"


def test_demo_table_is_in_words_with_its_columns_lined_up(tmp_path):
    """The table `bracewalk demo` prints: statuses by shape and word, findings and priorities in words, no codes."""
    store = Store(tmp_path / "demo.db")
    site_id = load_demo(store)
    rows = [(record, recheck(store.beam(beam_id))) for beam_id, record in store.beams(site_id)]
    head, *lines = demo_table(rows)
    by_mark = {line.split()[0]: line for line in lines}
    assert by_mark["RB-4"].startswith("RB-4   ■ NOT PERMITTED        -  slenderness over the limit (▲ IMMEDIATE)")
    assert "RB-5   ✖ NOT ESTABLISHED      -  bearing restraint missing (▲ IMMEDIATE)" in lines
    assert by_mark["FJ-1"].endswith("bending overstress (▲ IMMEDIATE), compression edge unbraced (● before loading)")
    assert "_" not in "\n".join(lines)  # no stored code ("not_permitted", "bending_overstress") and no "(immediate)"
    assert "(immediate)" not in "\n".join(lines)
    util_end = head.index("util") + len("util")  # the utilisation column ends under its heading on every row
    assert all(line[util_end - 1] in "0123456789-" and line[util_end : util_end + 2] == "  " for line in lines)


def test_demo_command_writes_db_pdf_bundle(tmp_path):
    out = tmp_path / "demo-out"
    proc = subprocess.run(
        [sys.executable, "-m", "mobile.cli", "demo", "--out", str(out)],
        capture_output=True,
        text=True,
        cwd=ROOT,
        timeout=300,
    )
    assert proc.returncode == 0, proc.stderr
    assert (out / "notice.pdf").stat().st_size > 10_000
    assert (out / "cedar-hollow.bwsync").exists()
    assert (out / "cedar-hollow.db").exists()
    assert "RB-5" in proc.stdout
    assert "✖ NOT ESTABLISHED" in proc.stdout
    assert "not_established" not in proc.stdout
    # the memory rows are acknowledged before the notice is issued (its fixed date 2026-11-30), not days after
    import re

    from pypdf import PdfReader

    text = " ".join(" ".join(p.extract_text() for p in PdfReader(out / "notice.pdf").pages).split())
    # in this device's local time with its zone, as the photos' times are (storage.stamps.local_time)
    (at,) = re.findall(r"Memory rows acknowledged by .*? at (\d{4}-\d\d-\d\d \d\d:\d\d \S+)\.", text)
    assert at == local_time("2026-11-30T17:45:00Z"), at


def test_sync_cli_round_trip_same_digest(tmp_path):
    out = tmp_path / "d"
    subprocess.run(
        [sys.executable, "-m", "mobile.cli", "demo", "--out", str(out)],
        check=True,
        cwd=ROOT,
        capture_output=True,
        timeout=300,
    )
    other = tmp_path / "office.db"
    imp = subprocess.run(
        [sys.executable, "-m", "mobile.cli", "sync", "import", "--db", str(other), str(out / "cedar-hollow.bwsync")],
        capture_output=True,
        text=True,
        cwd=ROOT,
        timeout=300,
        env=dict(os.environ, BRACEWALK_FIRM_KEY=DEMO_FIRM_KEY),  # the demo's bundle opens under the demo's key only
    )
    assert imp.returncode == 0
    assert "merged" in imp.stdout
    d1 = subprocess.run(
        [sys.executable, "-m", "mobile.cli", "sync", "digest", "--db", str(out / "cedar-hollow.db")],
        capture_output=True,
        text=True,
        cwd=ROOT,
    ).stdout.strip()
    d2 = subprocess.run(
        [sys.executable, "-m", "mobile.cli", "sync", "digest", "--db", str(other)],
        capture_output=True,
        text=True,
        cwd=ROOT,
    ).stdout.strip()
    assert d1 == d2
    assert len(d1) == 64
    verify = subprocess.run(
        [sys.executable, "-m", "mobile.cli", "report", "--verify", str(out / "notice.pdf"), "--db", str(other)],
        capture_output=True,
        text=True,
        cwd=ROOT,
    )
    assert verify.returncode == 0
    assert "exactly issued notice" in verify.stdout
    bad = tmp_path / "bad.bwsync"
    raw = bytearray((out / "cedar-hollow.bwsync").read_bytes())
    raw[40] ^= 0xFF
    bad.write_bytes(bytes(raw))
    refused = subprocess.run(
        [sys.executable, "-m", "mobile.cli", "sync", "import", "--db", str(other), str(bad)],
        capture_output=True,
        text=True,
        cwd=ROOT,
    )
    assert refused.returncode == 1
    assert "refused" in refused.stderr


def test_demo_loads_are_the_ones_the_beam_form_derives(tmp_path):
    """The demo and the app share one line-load function and the same stored basis per beam."""
    from mobile.viewmodels.beam import BeamFormViewModel

    store = Store(tmp_path / "demo.db")
    site_id = load_demo(store)
    by_mark = {}
    for beam_id, record in store.beams(site_id):
        vm = BeamFormViewModel(store, site_id, beam_id)
        stored = store.beam(beam_id).loads
        form = vm.basis(vm.record()).line_loads_kn_m(record["tributary_m"])
        assert form == {"dead_kn_m": stored.dead_kn_m, "live_kn_m": stored.live_kn_m, "snow_kn_m": stored.snow_kn_m}
        by_mark[record["mark"]] = stored
    # line load = area load x tributary width (common practice), values from mobile/demo/site.json written out:
    # FB-1 is on the floor basis (1.5 kPa dead, 2.4 kPa live) at 2.0 m; RB-1 on the roof (1.2 dead, 2.6 snow) at 2.4 m.
    assert (by_mark["FB-1"].dead_kn_m, by_mark["FB-1"].live_kn_m, by_mark["FB-1"].snow_kn_m) == (3.0, 4.8, 0.0)
    assert (by_mark["RB-1"].dead_kn_m, by_mark["RB-1"].live_kn_m, by_mark["RB-1"].snow_kn_m) == (2.88, 0.0, 6.24)
