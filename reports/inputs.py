"""A beam record in words, one row per input, for the recheck sheet.

Every input the recheck used is listed, including the defaults, so the sheet can be checked against
the site. Where something was not seen or not recorded the row says so and names the unfavourable case
the recheck took in its place (``core.findings``, ``core.clauses.bending``, ``core.recheck``).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from core.models import SYSTEM_WORDS, Beam, Bearing
from core.records import DesignBasis, Site, chosen_basis

MATERIAL_WORDS = {"glulam": "glued-laminated timber (glulam)", "sawn": "sawn lumber"}
SERVICE_WORDS = {"dry": "dry", "wet": "wet (KS for wet service)"}
TREATMENT_WORDS = {"none": "none", "incised": "incised preservative treatment (KT)"}
STAMP_WORDS = {
    "up": "up, as marked",
    "down": "down: installed upside down",
    "not_visible": "not visible: the weaker of the layup's two bending strengths taken (CSA O86-19 Table 7.3 note)",
}
USE_WORDS = {
    "floor": "floor",
    "roof_plaster": "roof with a plaster or gypsum ceiling",
    "roof_other": "roof with another ceiling",
    "roof_no_ceiling": "roof without a ceiling",
}
NEGATIVE_LU_WORDS = {
    "between_restraints": "between real bottom-edge restraints",
    "zero_moment_point": "to the point of zero moment (an option: flagged on the recheck)",
}
DEAD_PATTERN_WORDS = {
    "per_part": "0.9D on the parts that relieve, 1.25D elsewhere, and the uniform cases",
    "uniform": "one dead-load factor on the whole beam (an option: flagged on the recheck)",
}
RESTRAINT_WORDS = {"yes": "restrained", "no": "NOT restrained", "not_visible": "not visible (taken as missing)"}


def _mm(value: float) -> str:
    """A length in whole millimetres where it is whole ('7200 mm'), else to 0.1 mm."""
    return f"{value:.0f} mm" if float(value).is_integer() else f"{value:.1f} mm"


def _bearing_words(b: Bearing) -> str:
    """'against lateral displacement: restrained; against rotation: NOT restrained; bearing length 140 mm'."""
    lateral, rotation = (RESTRAINT_WORDS[x.value] for x in (b.lateral, b.rotation))
    return f"against lateral displacement: {lateral}; against rotation: {rotation}; bearing length {_mm(b.length_mm)}"


def _braced_words(braced_by: str, spacing_mm: float | None) -> str:
    """How an edge is braced, in words: 'braced by purlins at 2400 mm', 'braced by decking (continuous)', ...

    Also 'braced by braces (spacing not recorded)' and 'not braced between the bearings'.
    """
    if braced_by == "none":
        return "not braced between the bearings"
    if braced_by == "decking":
        return "braced by decking (continuous)"  # decking has no spacing: it holds the edge along its length
    spacing = f" at {_mm(spacing_mm)}" if spacing_mm is not None else " (spacing not recorded)"
    return f"braced by {braced_by}{spacing}"


def _top_edge_words(beam: Beam) -> str:
    e = beam.top_edge
    words = _braced_words(e.braced_by.value, e.spacing_mm)
    if e.braced_by.value == "none":
        return words
    if e.fastened is None:
        return f"{words}, fastening not recorded: taken as not fastened"
    return f"{words}, {'fastened' if e.fastened else 'not fastened'}"


def input_rows(beam: Beam) -> list[tuple[str, str]]:
    """(label, value in words) for every input of ``beam``, in the order a reviewer checks them on site."""
    loads = beam.loads
    rows = [
        ("Mark", beam.mark),
        ("Material", MATERIAL_WORDS[beam.material.value]),
        ("Species and grade", f"{beam.species} {beam.grade}"),
        ("Size as measured (b × d)", f"{_mm(beam.b_mm)} × {_mm(beam.d_mm)}: the size the recheck uses"),
        ("As specified", _specified_words(beam)),
        ("Spans", " + ".join(_mm(s) for s in beam.spans_mm)),
        ("Overhangs (left, right)", f"{_mm(beam.overhang_left_mm)}, {_mm(beam.overhang_right_mm)}"),
    ]
    n = len(beam.bearings)
    for j, b in enumerate(beam.bearings):
        end = " (left end)" if j == 0 else " (right end)" if j == n - 1 else ""
        rows.append((f"Support {j + 1}{end}", _bearing_words(b)))
    rows += [
        ("Top edge", _top_edge_words(beam)),
        ("Bottom edge", _braced_words(beam.bottom_edge.braced_by.value, beam.bottom_edge.spacing_mm)),
        (
            "Bridging spacing",
            "none recorded" if beam.bridging_spacing_mm is None else _mm(beam.bridging_spacing_mm),
        ),
        (
            "Line loads (specified)",
            f"dead {loads.dead_kn_m:g}, live {loads.live_kn_m:g}, snow {loads.snow_kn_m:g} kN/m"
            + ("; self-weight added" if beam.self_weight else "; self-weight not added"),
        ),
        ("Dead load where it relieves", DEAD_PATTERN_WORDS[beam.dead_load_pattern.value]),
        (
            "Use",
            "not recorded: the strictest deflection limit taken" if beam.use is None else USE_WORDS[beam.use.value],
        ),
        ("Service condition", SERVICE_WORDS[beam.service.value]),
        ("Treatment", TREATMENT_WORDS[beam.treatment.value]),
        (
            "Effective length (CSA O86-19 Table 7.4 row)",
            "chosen from the geometry" if beam.le_case == "auto" else f"{beam.le_case}, as the reviewer chose",
        ),
        ("Lu where the bottom edge is in compression", NEGATIVE_LU_WORDS[beam.negative_lu.value]),
        ("System", _system_words(beam)),
    ]
    if beam.material.value == "glulam":
        rows.append(("Top stamp", STAMP_WORDS[beam.top_stamp.value]))
    return rows


def _system_words(beam: Beam) -> str:
    """The load-sharing system (sawn lumber's KH), or what was taken where it was not recorded."""
    if beam.system is not None:
        return SYSTEM_WORDS[beam.system.value]
    if beam.material.value == "glulam":
        return "not recorded: glulam takes no system factor (KH 1.0)"
    return "not recorded: taken as a single member (KH 1.0, the unfavourable case)"


def _specified_words(beam: Beam) -> str:
    """The specified member, compared with the measured one within the size tolerance; or 'not recorded'."""
    s = beam.specified
    if s is None:
        return "not recorded: no comparison with the drawings"
    return (
        f"{s.species} {s.grade}, {_mm(s.b_mm)} × {_mm(s.d_mm)}; "
        f"compared with the measured size within {_mm(beam.size_tolerance_mm)}"
    )


def loads_source(tributary_m: float | None, basis_name: str, basis: DesignBasis) -> str:
    """Where a beam's checked line loads came from, in words: derived from a design basis, or typed.

    ``basis_name`` is the beam's named basis on the site ("" for the site's main one); with a tributary
    width the line loads are the basis's area loads times the width (kN/m = kPa x m, common practice).
    """
    if tributary_m is None:
        return "line loads as typed on the tablet (no tributary width recorded)"
    where = f"the site's design basis '{basis_name}'" if basis_name else "the site's design basis"
    if basis.drawings.strip():  # where the area loads are written: the engineer of record checks them there
        where += f" ({basis.drawings.strip()})"
    return (
        f"line loads derived from {where}: dead {basis.dead_kpa:g}, live {basis.live_kpa:g}, "
        f"snow {basis.snow_kpa:g} kPa x tributary width {float(tributary_m):g} m"
    )


def record_loads_source(record: Mapping[str, Any], site: Site) -> str:
    """Where a stored beam's line loads came from (``loads_source``), read from its record and its site.

    The record names its basis by ``load_basis`` (a name on the site; none: the site's main basis) and keeps its
    ``tributary_m`` when the tablet derived the line loads from that basis.
    """
    width = record.get("tributary_m")
    # a basis no longer on the site: its main one, as the recheck takes it
    name, basis = chosen_basis(site.design_basis, site.load_bases, str(record.get("load_basis") or ""))
    return loads_source(None if width is None else float(width), name, basis)


def loads_checked_words(beam: Beam, source: str = "") -> str:
    """The specified loads and bearing lengths a member was rechecked with, and where its loads came from.

    'dead 2.88 + self-weight 0.29, live 0, snow 4.68 kN/m specified (line loads derived from ...); bearing
    lengths 140 mm and 140 mm'. On a notice, so the engineer of record can see the inputs behind each number.
    The self-weight is the recheck's own (``core.member``: unit weight x b x d).
    """
    from core.member import member_properties

    loads = beam.loads
    weight = (
        f" + self-weight {member_properties(beam).self_weight_n_mm:.2f}"
        if beam.self_weight
        else " (self-weight not added)"
    )
    words = f"dead {loads.dead_kn_m:g}{weight}, live {loads.live_kn_m:g}, snow {loads.snow_kn_m:g} kN/m specified" + (
        f" ({source})" if source else ""
    )
    lengths = [_mm(b.length_mm) for b in beam.bearings]
    if len(lengths) == 1:
        return f"{words}; bearing length {lengths[0]}"
    return f"{words}; bearing lengths {', '.join(lengths[:-1])} and {lengths[-1]}"


def sheet_stem(mark: str) -> str:
    """A recheck sheet's file name without extension: 'recheck-' and the mark, safe in any file system."""
    return "recheck-" + "".join(ch if ch.isalnum() or ch in "-_" else "-" for ch in mark)
