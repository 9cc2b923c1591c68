"""Random fault campaigns: bad input to ``bracewalk check``, mutated bundles, killed imports.

Small counts run in the suite (tests/robustness/test_campaigns.py); large counts on demand:

    python -m tests.robustness.campaign --inputs 10000 --bundles 5000 --kills 500

Each campaign is seeded, so a figure can be reproduced; it prints one line of counts.
"""

from __future__ import annotations

import argparse
import contextlib
import copy
import io
import json
import random
import shutil
import signal
import sqlite3
import subprocess
import sys
import tempfile
import time
import traceback
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[2]

NASTY: list[Any] = [
    None,
    True,
    0,
    -1,
    1e-150,
    5e-324,
    1e308,
    -1e308,
    2**63,
    10**40,
    "",
    "x" * 5000,
    "130",
    "incised",
    "none",
    "glulam",
    "sawn",
    [],
    {},
    [1, 2, 3],
    {"a": 1},
    "\u202e\u0000\u0007",
    "混凝土",
    0.5,
    1,
    38,
    19,
    300,
    60_000,
    1e6,
]


@dataclass
class Tally:
    """Counts of one campaign."""

    tried: int = 0
    counts: dict[str, int] = field(default_factory=dict)
    examples: list[str] = field(default_factory=list)

    def add(self, outcome: str, example: str = "") -> None:
        self.tried += 1
        self.counts[outcome] = self.counts.get(outcome, 0) + 1
        if example and len(self.examples) < 5:
            self.examples.append(example)


# -- bracewalk check ---------------------------------------------------------------------------------
def _example_beams() -> list[dict[str, Any]]:
    beams = [json.loads(p.read_text()) for p in sorted((ROOT / "examples").glob("*.json"))]
    from tests.core.beams import glulam, sawn

    beams += [glulam().model_dump(mode="json"), sawn().model_dump(mode="json")]
    return beams


def _paths(value: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    out = [prefix] if prefix else []
    if isinstance(value, dict):
        for k, v in value.items():
            out += _paths(v, (*prefix, k))
    elif isinstance(value, list):
        for i, v in enumerate(value):
            out += _paths(v, (*prefix, i))
    return out


def _set(doc: Any, path: tuple[Any, ...], value: Any, delete: bool = False) -> None:
    for key in path[:-1]:
        doc = doc[key]
    if delete:
        del doc[path[-1]]
    else:
        doc[path[-1]] = value


def _mutate_doc(rng: random.Random, doc: dict[str, Any]) -> None:
    """One to three fields set to a nasty value, deleted, or set to a random number."""
    for _ in range(rng.randint(1, 3)):
        path = rng.choice(_paths(doc))
        roll = rng.random()
        if roll < 0.6:
            value = rng.choice(NASTY)
            if isinstance(value, float) and rng.random() < 0.5:
                value = value * rng.choice([1, -1, 1e-3, 1e3])
            _set(doc, path, value)
        elif roll < 0.8:
            _set(doc, path, None, delete=True)
        else:
            _set(doc, path, rng.uniform(-1e4, 1e5))


def _mutate_text(rng: random.Random, text: str) -> str:
    """Sometimes NaN or Infinity, deep nesting, a cut, or a huge number in the JSON text."""
    roll = rng.random()
    if roll < 0.05:
        return text.replace("0", "NaN", 1) if rng.random() < 0.5 else text.replace("1", "Infinity", 1)
    if roll < 0.08:
        depth = rng.choice([100, 5000, 50_000])
        return "[" * depth + "]" * depth
    if roll < 0.10:
        return text[: rng.randrange(len(text))]
    if roll < 0.12:
        return text.replace("130", "9" * 4300, 1)
    return text


def _mutate_bytes(rng: random.Random, text: str) -> bytes:
    """The text encoded, sometimes with a BOM, as UTF-16 or Latin-1, or with one byte changed."""
    data = text.encode()
    roll = rng.random()
    if roll < 0.05:
        return b"\xef\xbb\xbf" + data
    if roll < 0.08:
        return text.encode("utf-16")
    if roll < 0.11:
        return text.encode("latin-1", errors="replace")
    if roll < 0.13:
        i = rng.randrange(len(data))
        return data[:i] + bytes([rng.randrange(256)]) + data[i + 1 :]
    return data


def mutate_beam(rng: random.Random, beams: list[dict[str, Any]]) -> bytes:
    """One bad (or sometimes good) beam file, as bytes."""
    doc = copy.deepcopy(rng.choice(beams))
    _mutate_doc(rng, doc)
    return _mutate_bytes(rng, _mutate_text(rng, json.dumps(doc, ensure_ascii=False)))


def run_check(data: bytes, path: Path) -> tuple[str, str]:
    """Run ``bracewalk check`` in-process; the outcome: ok, clear_error or traceback."""
    from mobile.cli import main

    path.write_bytes(data)
    out, err = io.StringIO(), io.StringIO()
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            code = main(["check", str(path)])
    except BaseException:
        return "traceback", traceback.format_exc(limit=-2)
    if code == 0:
        try:
            json.loads(out.getvalue(), parse_constant=lambda c: (_ for _ in ()).throw(ValueError(c)))
        except ValueError as exc:
            return "traceback", f"output not strict JSON: {exc}"
        return "ok", ""
    lines = err.getvalue().strip().splitlines()
    if code in (1, 2) and len(lines) <= 2 and "Traceback" not in err.getvalue():
        return "clear_error", ""
    return "traceback", err.getvalue()[-300:]


def check_campaign(count: int, seed: int = 10) -> Tally:
    """``count`` generated inputs to ``bracewalk check``."""
    rng = random.Random(seed)
    beams = _example_beams()
    tally = Tally()
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "beam.json"
        for _ in range(count):
            outcome, why = run_check(mutate_beam(rng, beams), path)
            tally.add(outcome, why if outcome == "traceback" else "")
    return tally


# -- mutated bundles -------------------------------------------------------------------------------
def _resign(key: Any, raw: bytes, edit_manifest: Any, edit_ops: Any) -> bytes:
    """The bundle with ops and manifest edited, then signed again with ``key`` (an insider's device key)."""
    from tests.storage.signing import sign_bundle

    z = zipfile.ZipFile(io.BytesIO(raw))
    manifest = json.loads(z.read("manifest.json"))
    ops = [json.loads(line) for line in z.read("ops.jsonl").decode().splitlines()]
    edit_ops(ops)
    manifest["op_count"] = len(ops)
    edit_manifest(manifest)
    blobs = {name: z.read(name) for name in z.namelist() if name.startswith("blobs/")}
    return sign_bundle(key, manifest, ops, blobs)


def _damage(rng: random.Random, raw: bytes) -> bytes | None:
    """Raw bytes flipped, cut or inserted (70 % of the time None: the content is edited instead)."""
    roll = rng.random()
    if roll < 0.3:
        i = rng.randrange(len(raw))
        return raw[:i] + bytes([raw[i] ^ (1 << rng.randrange(8))]) + raw[i + 1 :]
    if roll < 0.4:
        return raw[: rng.randrange(len(raw))]
    if roll < 0.45:
        i = rng.randrange(len(raw))
        return raw[:i] + rng.randbytes(rng.randint(1, 50)) + raw[i:]
    return None


def _edit_one_op(rng: random.Random, ops: list[dict[str, Any]]) -> None:
    """A nasty value in one op's payload, base or top-level key; sometimes the op twice."""
    if not ops:
        return
    op = rng.choice(ops)
    where = rng.choice(["payload", "base", "top"])
    value = rng.choice(NASTY)
    if where == "top":
        op[rng.choice(list(op))] = value
    elif where == "payload" and op["payload"]:
        k = rng.choice(list(op["payload"]))
        if rng.random() < 0.2:
            del op["payload"][k]
        else:
            op["payload"][k] = value
    elif where == "base":
        op["base"][rng.choice(["b_mm", "name", "x"])] = value
    if rng.random() < 0.1:
        ops.append(copy.deepcopy(op))


def mutate_bundle(rng: random.Random, raw: bytes, key: Any) -> bytes:
    """Bytes damaged at random, or (with the device key, as an insider) a re-signed bundle with altered content."""
    damaged = _damage(rng, raw)
    if damaged is not None:
        return damaged

    def edit_manifest(m: dict[str, Any]) -> None:
        if rng.random() < 0.3:
            m[rng.choice(list(m))] = rng.choice([*NASTY, "office", {"x": 10**9}])

    return _resign(key, raw, edit_manifest, lambda ops: _edit_one_op(rng, ops))


def _fixture_bundle(tmp: Path) -> tuple[bytes, dict[str, Any], Any]:
    """The bundle, its exporter as a hub lists it, and the exporter's key (for insider edits)."""
    from storage import Store, identity
    from storage.bundle import export_bundle
    from tests.core.beams import glulam
    from tests.storage.signing import listing

    src = Store(tmp / "src.db")
    site = src.create_site(name="Campaign", project_number="P9")
    beam = src.save_beam(site.id, glulam())
    src.update_beam(beam, {"b_mm": 175, "notes": "checked"})
    d = src.raise_deficiency(site.id, beam, "x", "immediate", "Grid B", "Short bearing", "O86", "Fix")
    src.move_status(d.id, "corrected", "c", "contractor")
    src.add_photo(site.id, b"photo" * 40, deficiency_id=d.id)
    src.issue_notice(site.id, "P9-FR-1", b"%PDF-1.4 campaign", [d.id], "R", time.strftime("%Y-%m-%d"))
    export_bundle(src, tmp / "b.zip")
    listed, key = listing(src), identity.device_key(src.db)
    src.close()
    return (tmp / "b.zip").read_bytes(), listed, key


def bundle_campaign(count: int, seed: int = 11) -> Tally:
    """``count`` mutated bundles, each imported into a fresh database."""
    from storage import Store, identity
    from storage.bundle import import_bundle

    rng = random.Random(seed)
    tally = Tally()
    with tempfile.TemporaryDirectory() as tmpname:
        tmp = Path(tmpname)
        raw, listed, key = _fixture_bundle(tmp)
        ref = Store(tmp / "ref.db")
        identity.trust_devices(ref.db, [listed], at_ms=0)
        import_bundle(ref, tmp / "b.zip")
        ref_digest = ref.digest()
        ref.close()
        for n in range(count):
            data = mutate_bundle(rng, raw, key)
            bundle = tmp / f"m{n}.zip"
            bundle.write_bytes(data)
            db = tmp / f"d{n}.db"
            store = Store(db)
            identity.trust_devices(store.db, [listed], at_ms=0)  # the exporter, as the hub lists it
            try:
                report = import_bundle(store, bundle)
            except Exception:
                tally.add("crashed", traceback.format_exc(limit=-3))
            else:
                if report.outcome == "refused":
                    leftovers = store.db.execute("SELECT count(*) FROM op").fetchone()[0] + sum(
                        1 for p in store.blob_dir.rglob("*") if p.is_file()
                    )
                    outcome = "refused_whole" if leftovers == 0 else "crashed"
                    tally.add(outcome, f"refused but left {leftovers} ops or blobs" if leftovers else "")
                elif store.rebuild_projections() != store.projections():
                    tally.add("crashed", "applied but projections differ from the log")
                else:
                    tally.add("accepted_identical" if store.digest() == ref_digest else "accepted_valid")
            store.close()
            for suffix in ("", "-wal", "-shm", ".sent"):
                Path(str(db) + suffix).unlink(missing_ok=True)
            shutil.rmtree(store.blob_dir, ignore_errors=True)
            bundle.unlink()
    return tally


# -- killed imports ---------------------------------------------------------------------------------
IMPORT = (
    "import sys, json; from storage import Store, identity; import storage.bundle as b; "
    "b.BATCH_OPS = int(sys.argv[3]); s = Store(sys.argv[1]); "
    "identity.trust_devices(s.db, [json.loads(sys.argv[4])], at_ms=0); b.import_bundle(s, sys.argv[2])"
)


def kill_campaign(count: int, seed: int = 12, edits: int = 3000, batch_ops: int = 500) -> Tally:
    """``count`` imports SIGKILLed at random moments; each database checked, then the import resumed."""
    from storage import Store, identity
    from storage.bundle import export_bundle, import_bundle
    from tests.core.beams import glulam
    from tests.storage.signing import listing

    rng = random.Random(seed)
    tally = Tally()
    with tempfile.TemporaryDirectory() as tmpname:
        tmp = Path(tmpname)
        src = Store(tmp / "src.db")
        site = src.create_site(name="Kill")
        beam = src.save_beam(site.id, glulam())
        for i in range(edits):
            src.update_beam(beam, {"b_mm": 80 + i % 50, "notes": f"edit {i}"})
        src.add_photo(site.id, rng.randbytes(50_000))
        export_bundle(src, tmp / "big.zip")
        listed = listing(src)
        full = Store(tmp / "full.db")
        identity.trust_devices(full.db, [listed], at_ms=0)
        import_bundle(full, tmp / "big.zip")
        full_digest = full.digest()
        full.close()
        for run in range(count):
            db = tmp / f"k{run}.db"
            proc = subprocess.Popen(
                [sys.executable, "-c", IMPORT, str(db), str(tmp / "big.zip"), str(batch_ops), json.dumps(listed)],
                cwd=ROOT,
                stdout=subprocess.DEVNULL,
                stderr=subprocess.DEVNULL,
            )
            time.sleep(rng.uniform(0.05, 2.0))
            proc.send_signal(signal.SIGKILL)
            proc.wait()
            ok = True
            if db.exists():
                conn = sqlite3.connect(db)
                ok = conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
                conn.close()
            if ok:
                store = Store(db)
                identity.trust_devices(store.db, [listed], at_ms=0)  # a kill may come before the child's
                ok = store.rebuild_projections() == store.projections()
                ok = ok and import_bundle(store, tmp / "big.zip").outcome == "applied"
                ok = ok and store.digest() == full_digest
                shutil.rmtree(store.blob_dir, ignore_errors=True)
                store.close()
            tally.add("consistent" if ok else "corrupt")
            for suffix in ("", "-wal", "-shm", ".sent"):
                Path(str(db) + suffix).unlink(missing_ok=True)
    return tally


def main(argv: list[str] | None = None) -> int:
    """Run the campaigns and print their figures."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--inputs", type=int, default=1000)
    parser.add_argument("--bundles", type=int, default=500)
    parser.add_argument("--kills", type=int, default=20)
    args = parser.parse_args(argv)
    bad = 0
    for name, run, n in (
        ("check inputs", check_campaign, args.inputs),
        ("bundles mutated", bundle_campaign, args.bundles),
        ("imports killed", kill_campaign, args.kills),
    ):
        if n <= 0:
            continue
        started = time.monotonic()
        t = run(n)
        bad += t.counts.get("traceback", 0) + t.counts.get("crashed", 0) + t.counts.get("corrupt", 0)
        print(f"{name}: {t.tried} tried; {t.counts} ({time.monotonic() - started:.0f} s)")
        for e in t.examples:
            print("   ", e.strip().replace("\n", "\n    ")[:600])
    return 1 if bad else 0


if __name__ == "__main__":
    raise SystemExit(main())
