"""A large invented notice for a review by eye: ``.venv/bin/python scripts/big_notice.py COUNT OUT_DIR``.

Logs an invented site (Harrowgate Cold Storage & Maker Hall; firm, people and numbers fictitious: a
555-01xx phone, an .example e-mail) through the store: beams on five levels and ten gridlines cycling through
failing bending, a missing rotation restraint, a bearing not seen, a two-span beam, an unfastened-deck joist
and an unbraced deep glulam; COUNT deficiencies from their findings, plus three observations not on a beam;
0-4 photos each of varied shape (landscape, portrait, 4000 x 500, 40 x 30 px) and long notes (a paragraph, an
80-character word, French and Japanese, line breaks). Then issues the notice as the app does
(``mobile.issue.issue_notice_for_site``, memory rows acknowledged) to OUT_DIR/notice.pdf. Look at it with
``pdftoppm -r 60`` and ``pdftotext -layout``. Not a test and not a benchmark (the bench has its own notices).
"""

from __future__ import annotations

import io
import sys
import time
from collections.abc import Callable
from datetime import datetime
from pathlib import Path
from typing import Any

from PIL import Image, ImageDraw

from core.models import Beam
from core.recheck import recheck
from core.records import ReviewerProfile
from mobile.issue import acknowledge, issue_notice_for_site, rows_for_items
from storage import Store

LEVELS = ["Level 2", "Level 3", "Level 4", "Roof", "Mezzanine"]
LINES = "ABCDEFGHJK"
PHOTO_SIZES = [(2048, 1536), (1536, 2048), (4000, 500), (40, 30), (3000, 2000), (900, 1600)]
REVIEWER = "Tomasz Vêrelund-Achebe, P.Eng."
LONG_PARA = (
    "At the east bearing the hanger is missing two of its six face nails and the seat has been packed with a "
    "loose timber shim about 19 mm thick that is not shown on S-301; the shim has split along the grain and "
    "the beam bears on roughly half of its width. The bracing crew (Équipe Sénéchal) said the shim was a "
    "temporary fix from the erection crew. 現場責任者に確認済み。"
)
LONG_WORD = "HGR-" + "X7" * 38  # 80 characters, no spaces
HELD = {"lateral": True, "rotation": True, "length_mm": 140}
GLULAM: dict[str, Any] = {
    "top_stamp": "up", "use": "roof_no_ceiling", "material": "glulam", "species": "D.Fir-L", "grade": "24f-E",
    "b_mm": 130, "d_mm": 456, "spans_mm": [7200], "bearings": [HELD, HELD],
    "top_edge": {"braced_by": "purlins", "spacing_mm": 1200, "fastened": True},
}  # fmt: skip
KINDS: list[tuple[dict[str, Any], float]] = [  # (changes to GLULAM, tributary width m)
    ({"top_edge": {"braced_by": "purlins", "spacing_mm": 2400, "fastened": True}}, 3.6),
    ({"d_mm": 532, "bearings": [HELD, dict(HELD, rotation=False)]}, 2.4),
    ({"d_mm": 532, "bearings": [dict(HELD, lateral="not_visible", rotation="not_visible"), HELD]}, 2.4),
    ({"d_mm": 532, "spans_mm": [7000, 7000], "bearings": [HELD, dict(HELD, rotation=False, length_mm=280), HELD]}, 3.0),
    (
        {
            "material": "sawn",
            "species": "S-P-F",
            "grade": "No.1/No.2",
            "b_mm": 38,
            "d_mm": 235,
            "spans_mm": [3900],
            "top_edge": {"braced_by": "decking", "fastened": False},
            "use": "floor",
            "top_stamp": "not_visible",
        },
        0.4,
    ),
    (
        {
            "species": "Spruce-Pine",
            "grade": "20f-EX",
            "b_mm": 80,
            "d_mm": 608,
            "spans_mm": [6000],
            "top_edge": {"braced_by": "none"},
        },
        1.8,
    ),
]


def _issue_day_clock() -> Callable[[], int]:
    """A wall clock (ms) from 08:00 Pacific on the notice's day (2026-12-01), at the real rate."""
    origin_ms, began = int(datetime.fromisoformat("2026-12-01T16:00:00Z").timestamp() * 1000), time.monotonic()
    return lambda: origin_ms + int((time.monotonic() - began) * 1000)


def photo(i: int, size: tuple[int, int]) -> bytes:
    """A drawn stand-in photo of the given pixel size (a beam across a coloured field, labelled)."""
    img = Image.new("RGB", size, (80 + i * 37 % 150, 110, 140))
    draw = ImageDraw.Draw(img)
    w, h = size
    draw.rectangle(
        [w * 0.1, h * 0.4, w * 0.9, h * 0.6], fill=(205, 160, 105), outline=(0, 0, 0), width=max(1, w // 200)
    )
    draw.text((5, 5), f"P{i} {w}x{h}", fill=(255, 255, 255))
    out = io.BytesIO()
    img.save(out, "JPEG", quality=85)
    return out.getvalue()


def new_site(store: Store) -> Any:
    """The invented reviewer, site and visit."""
    store.set_reviewer_profile(
        ReviewerProfile.model_validate(
            {
                "name": "Tomasz Vêrelund-Achebe",
                "designation": "P.Eng.",
                "licence_number": "EGBC 99-0042",
                "firm": "Quillfeather Timber Review Inc.",
                "phone": "250-555-0183",
                "email": "t.verelund@quillfeather.example",
            }
        )
    )
    site = store.create_site(
        name="Harrowgate Cold Storage & Maker Hall", address="2210 Sedgewick Yard Road, Port Alder",
        permit_number="BP-2026-1188", project_number="QTR-2640", owner="Port Alder Harbour Cooperative",
        contractor="Brightkeel Construction Ltd.", firm="Quillfeather Timber Review Inc.",
        design_basis={"dead_kpa": 1.2, "live_kpa": 0.0, "snow_kpa": 2.6, "use": "roof_no_ceiling",
                      "drawings": "S-101 rev 4, S-201 rev 3, S-301 rev 2"},
        load_bases={"floor": {"dead_kpa": 1.5, "live_kpa": 2.4, "snow_kpa": 0.0, "use": "floor"}},
    )  # fmt: skip
    store.start_visit(
        site.id, reviewer=REVIEWER, started_at="2026-11-30 08:10", weather="rain, 6 °C",
        scope_reviewed="Levels 2-4, mezzanine and roof framing, grids A-K / 1-9",
        scope_not_reviewed="Connections above the freezer ceiling (no access)",
    )  # fmt: skip
    return site


def log_beam(store: Store, site: Any, k: int) -> tuple[str, Beam, str]:
    """The k-th beam logged (every fourth with a photo of the beam): (id, beam, 'level, grid, mark')."""
    changes, trib = KINDS[k % len(KINDS)]
    data = dict(GLULAM, **changes)
    level, line, g = LEVELS[k % len(LEVELS)], LINES[(k // 5) % len(LINES)], 1 + k % 8
    grid = f"{line} / {g}-{g + 1}" + (f"-{g + 2}" if len(data["spans_mm"]) == 2 else "")
    mark = {"Roof": "RB", "Mezzanine": "MB"}.get(level, "FB" if data["material"] == "glulam" else "FJ") + f"-{k + 1}"
    basis = "floor" if data["use"] == "floor" else "roof"
    loads = {"roof": site.design_basis, **site.load_bases}[basis].line_loads_kn_m(trib)
    beam = Beam.model_validate(dict(data, mark=mark, loads=loads))
    notes = "Seen from the scissor lift only;\nthe far bearing is behind the duct. Contrôle à refaire. 梁端未確認"
    beam_id = store.save_beam(
        site.id, beam,
        {"level": level, "gridline": grid, "tributary_m": trib, "load_basis": None if basis == "roof" else basis,
         "notes": notes if k % 17 == 3 else ""},
    )  # fmt: skip
    if k % 4 == 0:
        size = PHOTO_SIZES[k % len(PHOTO_SIZES)]
        store.add_photo(site.id, photo(k, size), beam_id=beam_id, caption=f"{mark} overall, {size[0]}x{size[1]}",
                        taken_at="2026-11-30T16:20:00Z", taken_by="T. Vêrelund-Achebe")  # fmt: skip
    return beam_id, beam, f"{level}, grid {grid}, {mark}"


def raise_with_photos(store: Store, site_id: str, beam_id: str, where: str, finding: Any, n: int) -> None:
    """The n-th deficiency from a finding, its text sometimes long or in other scripts, with 0-4 photos."""
    desc = finding.message + ("\n" + LONG_PARA if n % 23 == 5 else "")
    where += (f", {finding.region}" if finding.region else "") + (", hanger " + LONG_WORD if n % 31 == 7 else "")
    action = finding.action + (" Vérifier l'étrier; 検査員に連絡してください。" if n % 29 == 11 else "")
    d = store.raise_deficiency(
        site_id, beam_id, finding.code, finding.priority.value, where, desc, f"S-201 rev 3; {finding.clause}", action
    )
    for j in range((0, 1, 1, 2, 0, 4)[(n + 1) % 6]):
        size = PHOTO_SIZES[(n + 1 + j) % len(PHOTO_SIZES)]
        caption = f"{d.number} view {j + 1} ({size[0]}x{size[1]})" + (" — étrier déformé 变形" if j == 2 else "")
        store.add_photo(site_id, photo(1000 + 5 * n + j, size), deficiency_id=d.id, caption=caption,
                        taken_at="2026-11-30T16:25:00Z", taken_by="T. Vêrelund-Achebe")  # fmt: skip


def build(db: Path, target: int, out: Path) -> None:
    """Log the site with ``target`` deficiencies from beam findings, three observations, and issue the notice."""
    store = Store(db, wall_clock_ms=_issue_day_clock())  # items raised on the notice's day, never after it
    site = new_site(store)
    count = k = 0
    while count < target:
        beam_id, beam, where = log_beam(store, site, k)
        for f in recheck(beam).findings:
            if f.priority.value != "observation" and count < target:
                raise_with_photos(store, site.id, beam_id, where, f, count)
                count += 1
        k += 1
    for j in range(3):
        note = f"Temporary guard missing at the stair opening;\nlumber stacked on the L{2 + j} slab edge.\n"
        store.raise_deficiency(
            site.id, None, "reviewer_observation", "before_next_review", f"Level {2 + j}, grid C-D / {j + 2}",
            note + LONG_PARA, "Site safety (common practice)", "Reinstate the guard, move the stack. " + LONG_WORD,
        )  # fmt: skip
    ack = acknowledge(store, rows_for_items(store, site.id), REVIEWER)
    issued, path = issue_notice_for_site(store, site.id, out, REVIEWER, issued_on="2026-12-01", acknowledgement=ack)
    print(f"{count} deficiencies on {k} beams (+3 observations); notice {issued.number} -> {path}")
    store.close()


if __name__ == "__main__":
    folder = Path(sys.argv[2])
    folder.mkdir(parents=True, exist_ok=True)
    for suffix in ("", "-wal", "-shm"):
        Path(f"{folder / 'site.db'}{suffix}").unlink(missing_ok=True)
    build(folder / "site.db", int(sys.argv[1]), folder / "notice.pdf")
