"""The demo site: logged through the storage API like a user's input, then the whole job headless."""

from __future__ import annotations

import io
import json
import time
from collections.abc import Callable
from datetime import datetime
from importlib import resources
from pathlib import Path
from typing import Any

from core.models import Beam
from core.recheck import recheck
from core.records import ReviewerProfile
from core.results import Recheck, utilisation_text
from mobile.viewmodels.common import STATUS_WORDS, finding_words, status_label
from reports.words import SHORT_PRIORITY
from storage import Store
from storage.bundle import export_bundle
from storage.store import DEMO_FIRM_KEY

CAUTION = (
    "Results support, and never replace, the judgement of the engineer of record; local codes and "
    "licensed practice govern."
)


DEMO_RAISED_AT = "2026-11-30T17:25:00Z"  # 09:25 Pacific: after the 09:15 visit's 09:20 photos, before the 09:45 ack


def demo_clock() -> Callable[[], int]:
    """A wall clock (ms) that starts at DEMO_RAISED_AT and runs at the real rate: the demo's records keep its day."""
    origin_ms, began = int(datetime.fromisoformat(DEMO_RAISED_AT).timestamp() * 1000), time.monotonic()
    return lambda: origin_ms + int((time.monotonic() - began) * 1000)


def demo_data() -> dict[str, Any]:
    """The bundled demo scenario (invented site, firm and people)."""
    return json.loads(resources.files("mobile.demo").joinpath("site.json").read_text(encoding="utf-8"))


def demo_photo(label: str) -> bytes:
    """A small generated stand-in photo (the demo has no camera): a drawn beam end and a label."""
    from PIL import Image, ImageDraw

    img = Image.new("RGB", (640, 480), (188, 176, 160))
    draw = ImageDraw.Draw(img)
    draw.rectangle([80, 140, 560, 260], fill=(205, 160, 105), outline=(60, 40, 20), width=4)
    draw.rectangle([470, 260, 560, 440], fill=(150, 150, 150), outline=(40, 40, 40), width=3)
    draw.text((90, 60), f"demo photo: {label}", fill=(0, 0, 0))
    out = io.BytesIO()
    img.save(out, "JPEG", quality=80)
    return out.getvalue()


def load_demo(store: Store) -> str:
    """Log the demo site, its visits and beams through the storage API; return the site id."""
    data = demo_data()
    floor = dict(data["floor_basis"], use="floor")
    site = store.create_site(**data["site"], demo=True, load_bases={"floor": floor})
    bases = {"roof": site.design_basis, **site.load_bases}  # as stored: the app's beam form reads the same
    visit_ids = {v["key"]: store.start_visit(site.id, **{k: v[k] for k in v if k != "key"}).id for v in data["visits"]}
    for entry in data["beams"]:
        loads = bases[entry["basis"]].line_loads_kn_m(entry["tributary_m"])
        beam = Beam.model_validate(dict(entry["beam"], loads=loads))
        beam_id = store.save_beam(
            site.id,
            beam,
            {
                "level": entry["level"],
                "gridline": entry["gridline"],
                "tributary_m": entry["tributary_m"],
                "load_basis": None if entry["basis"] == "roof" else entry["basis"],  # the site's own basis is None
                "notes": entry["why"],
                "visit_id": visit_ids[entry["visit"]],  # the visit it was logged on, as the app records it
            },
        )
        if entry["beam"]["mark"] in ("RB-5", "RB-8"):
            store.add_photo(
                site.id,
                demo_photo(entry["beam"]["mark"]),
                beam_id=beam_id,
                caption=f"{entry['beam']['mark']} at {entry['gridline']}",
                taken_at="2026-11-30T17:20:00Z",  # the demo visit (09:20 Pacific), fixed so the demo repeats
                taken_by="Priya Okonkwo-Lind",
            )
    return site.id


def set_demo_reviewer(store: Store) -> ReviewerProfile:
    """Make the demo's invented reviewer (with a fictional phone and e-mail) the signing reviewer of ``store``.

    For the demo's own database only (``bracewalk demo``): the app's first run loads the demo site into
    the user's database, and must not sign the user's notices as the demo reviewer.
    """
    profile = ReviewerProfile.model_validate(demo_data()["reviewer_profile"])
    store.set_reviewer_profile(profile)
    return profile


def raise_all(store: Store, site_id: str) -> list[tuple[dict[str, Any], Recheck]]:
    """Recheck every beam and raise a deficiency for each finding a reviewer acts on."""
    rows = []
    for beam_id, record in store.beams(site_id):
        result = recheck(store.beam(beam_id))
        rows.append((record, result))
        for f in result.findings:
            if f.priority.value == "observation":
                continue
            where = f"{record['level']}, grid {record['gridline']}, {record['mark']}" + (
                f", {f.region}" if f.region else ""
            )
            store.raise_deficiency(
                site_id, beam_id, f.code, f.priority.value, where, f.message, f"S-201 rev 2; {f.clause}", f.action
            )
    return rows


STATUS_WIDTH = max(len(status_label(s)) for s in STATUS_WORDS)  # "✖ NOT ESTABLISHED"


def demo_table(rows: list[tuple[dict[str, Any], Recheck]]) -> list[str]:
    """The demo's table in words: mark, status by shape and word, governing utilisation, each finding and priority.

    'RB-3   ▲ DEFICIENT         1.66  bending overstress (▲ IMMEDIATE)'; the columns line up whatever the status.
    """
    out = [f"{'mark':<6} {'status':<{STATUS_WIDTH}} {'util':>6}  findings"]
    for record, result in rows:
        util = "-" if result.governing_utilisation is None else utilisation_text(result.governing_utilisation)
        found = [f"{finding_words(f.code)} ({SHORT_PRIORITY[f.priority.value]})" for f in result.findings]
        status = status_label(result.status.value)
        out.append(f"{record['mark']:<6} {status:<{STATUS_WIDTH}} {util:>6}  {', '.join(found) or '-'}")
    return out


def run_demo(out: Path, serve: bool = False) -> int:
    """``bracewalk demo --out DIR``: the whole job on the demo site; print a table and the paths."""
    from mobile.issue import acknowledge, issue_notice_for_site, rows_for_items

    start = time.perf_counter()
    out.mkdir(parents=True, exist_ok=True)
    db_path = out / "cedar-hollow.db"
    for suffix in ("", "-wal", "-shm"):
        Path(str(db_path) + suffix).unlink(missing_ok=True)
    # the demo's marked key, so its bundle opens anywhere in a demo; its clock on the demo's visit day, so the
    # items are raised that morning, before the notice that lists them is issued (dated 2026-11-30)
    store = Store(db_path, firm_key=DEMO_FIRM_KEY, wall_clock_ms=demo_clock())
    site_id = load_demo(store)
    set_demo_reviewer(store)
    rows = raise_all(store, site_id)
    reviewer = "Priya Okonkwo-Lind, P.Eng."
    # the demo's reviewer acknowledges the table rows entered from memory (printed on the notice with the time)
    # at a fixed time on the demo's issue day (09:45 Pacific, after the 09:15 visit), so it never follows the issue
    ack = acknowledge(store, rows_for_items(store, site_id), reviewer, at="2026-11-30T17:45:00Z")
    notice, pdf_path = issue_notice_for_site(
        store, site_id, out / "notice.pdf", issued_by=reviewer, issued_on="2026-11-30", acknowledgement=ack
    )
    bundle = out / "cedar-hollow.bwsync"
    export_bundle(store, bundle, include_demo=True)  # asked for: the demo's own bundle
    print("\n".join(demo_table(rows)))
    print()
    print(
        f"deficiencies raised: {len(store.deficiencies(site_id))}; notice {notice.number} "
        f"({len(notice.deficiency_ids)} items)"
    )
    print(f"database: {db_path}")
    print(f"notice:   {pdf_path}")
    print(f"bundle:   {bundle}")
    from mobile.demo.office import office_demo

    print(office_demo(store, out, serve=serve))
    print(f"({time.perf_counter() - start:.1f} s) {CAUTION}")
    store.close()
    return 0
