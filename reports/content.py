"""Plain content for a notice and a recheck sheet, built from core results and records."""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass, field, replace

from core.kinds import FindingCode
from core.models import Beam, BottomBracing, Restraint, TopBracing
from core.records import Deficiency, Site, Visit
from core.remedies import once_corrected, remedies
from core.results import (
    PRIORITY_ORDER,
    BearingCheck,
    CheckLine,
    FactorTrace,
    Recheck,
    check_lines,
    utilisation_text,
)
from reports.inputs import loads_checked_words
from reports.tablerows import RowUsed

CAUTIONS = (
    "bracewalk is a recording and recheck aid for a qualified reviewer. Its results are advisory: they "
    "support, and never replace, the judgement of the engineer of record.",
    "The engineer of record decides repairs, substitutions and any acceptance of the as-built condition.",
    "Local codes, the authority having jurisdiction and licensed practice govern.",
    "The contractor is responsible for means, methods, sequencing, site safety and temporary bracing.",
    "Observations are limited to work visible and accessible on the visit date; work listed as not "
    "reviewed is outside this notice.",
    "What the reviewer could not see or did not record (a bearing's restraint, a grade stamp, the fastening of "
    "purlins or decking) is taken as the unfavourable case in the recheck; each item and sheet says where.",
    "The recheck behind each item covers gravity line loads only (dead, live and snow); wind, earthquake, "
    "point loads and connections are not checked by it.",
    "IMMEDIATE items: make the area safe now (keep loads off, shore or brace); do not wait for this written "
    "notice: the reviewer also tells the site superintendent in person or by phone.",
)


@dataclass(frozen=True)
class Sketch:
    """What the beam sketch draws, in mm along the beam."""

    elements: list[tuple[str, float, float]]  # (kind, x0, length)
    supports_x: list[float]
    restrained: list[str]  # per support: "restrained", "NOT restrained", "not visible"
    braces_top_x: list[float]
    braces_bottom_x: list[float]
    negative: list[tuple[float, float]]
    decking: bool
    support_labels: list[str] = field(default_factory=list)  # "D/2" per support, from the gridline
    title: str = ""  # "RB-5 · level Roof · grid D / 2-3"
    # per support, the restraints not seen ("lateral displacement", "rotation about the long axis"), each taken
    # as not restrained
    not_seen: list[tuple[str, ...]] = field(default_factory=list)
    # the purlins' or decking's fastening: True fastened, False seen not fastened, None not recorded (taken as not)
    top_fastened: bool | None = None


def ft_in(length_mm: float) -> str:
    """A length in feet and inches to the nearest 1/4 in (7200 mm is 23 ft 7 1/2 in; 1 in = 25.4 mm exactly)."""
    quarters = round(length_mm / 25.4 * 4)
    feet, rest = divmod(quarters, 48)
    inches, q = divmod(rest, 4)
    frac = {0: "", 1: " 1/4", 2: " 1/2", 3: " 3/4"}[q]
    return f"{feet}'-{inches}{frac}\""


def support_names(gridline: str, supports: int) -> list[str]:
    """Each support named by its gridline, written in the order the gridline is: [] when it cannot tell.

    'D / 2-3' (line D, from grid 2 to grid 3) with 2 supports -> ['D/2', 'D/3']; 'A-B / 4' -> ['A/4', 'B/4'],
    so the sketch reads like the Location line. The range names one grid per support ('F / 1-2-3' for a
    two-span beam); a range naming only the two ends of a longer beam names the end supports and leaves
    the inner ones '' (their grid is not recorded, and is never guessed). Anything else: [].
    """
    parts = [x.strip() for x in gridline.replace("grid", "").split("/") if x.strip()]
    if len(parts) != 2:
        return []
    range_first = "-" not in parts[1]
    line, span = (parts[1], parts[0]) if range_first else (parts[0], parts[1])
    marks = [m.strip() for m in span.split("-") if m.strip()]
    if "-" in line or len(marks) < 2 or supports < 2:
        return []
    if len(marks) == 2 and supports > 2:  # only the ends are recorded
        marks = [marks[0], *[""] * (supports - 2), marks[1]]
    if len(marks) != supports:
        return []
    return [(f"{m}/{line}" if range_first else f"{line}/{m}") if m else "" for m in marks]


def support_words(k: int, names: list[str]) -> str:
    """'support 2 (grid D/3)'; an inner support whose grid is not recorded: 'support 2 (between grid F/1 and F/3)'."""
    if not names:
        return f"support {k}"
    name = names[k - 1]
    if name:
        return f"support {k} (grid {name})"
    return f"support {k} (between grid {names[0]} and {names[-1]})"


MILESTONES = {
    "immediate": "now: make safe",
    "before_loading": "before loading or concealment",
    "before_next_review": "before the next review",
    "observation": "for information: no action due",
}


def same_member_words(item: Item, group: list[Item], label: Callable[[str], str]) -> str:
    """The other items on ``item``'s member, each with its priority (``label``); '' when it is alone.

    A member's items are closed one by one: the superintendent who closes the less urgent one must not
    take the urgent one as closed with it (a member overstressed now, and the unbraced edge that causes
    it, are two items of different priorities).
    """
    others = [o for o in group if o is not item]
    if not item.member or not others:
        return ""
    listed = "; ".join(f"{o.number} ({label(o.priority)})" for o in others)
    return f"{listed}. Each item is closed on its own: closing this one does not close another."


BLANK = "_" * 46  # a line to write on, in the response box


def response_lines(priority: str) -> list[str]:
    """The item's response box, line by line: what the contractor writes back, by hand, before the re-review.

    An IMMEDIATE item first asks how the area was made safe, by whom and when, and when the reviewer was told
    (common practice: a make-safe directive is confirmed back to the person who gave it, the same day); every
    item then asks for the action taken, on lines enough to say it, with the date and a name.
    """
    lines = []
    if priority == "immediate":
        lines += [
            f"Made safe (shored, propped or unloaded): {BLANK[:30]}",
            f"by (name): {BLANK[:24]}  on (date and time): {BLANK[:16]}",
            f"Reviewer told (date and time, by whom): {BLANK[:31]}",
        ]
    if priority == "observation":
        return lines
    lines += [
        f"Action taken: {BLANK}",
        f"{BLANK}{BLANK[:14]}",
        f"Date: {BLANK[:14]}  Name: {BLANK[:30]}",
    ]
    return lines


def due_words(priority: str, due: str) -> str:
    """What the item is due by: the date or milestone the reviewer set, else the milestone of its priority."""
    return due.strip() or MILESTONES.get(priority, "before the next review")


@dataclass(frozen=True)
class Mark:
    """One mark drawn on a photo: an arrow (tail -> head) or a ring (centre, radius); fractions of width/height."""

    kind: str  # "arrow" or "ring"
    x: float
    y: float
    x2: float = 0.0  # arrow head, or ring radius (fraction of the photo's shorter side) in x2
    y2: float = 0.0


@dataclass(frozen=True)
class Photo:
    """A photo on the notice: read only when it is drawn (``load``), captioned, with its marks."""

    sha256: str
    load: Callable[[], bytes] = field(compare=False, repr=False)
    caption: str = ""
    marks: tuple[Mark, ...] = ()


Check = CheckLine  # one check of the recheck, demand against capacity (core.results.check_lines)


@dataclass(frozen=True)
class Item:
    """One numbered deficiency item."""

    number: str
    location: str
    observed: str
    finding: str
    reference: str
    action: str
    priority: str
    due: str
    key_numbers: list[tuple[str, str]]
    photos: list[bytes | Photo] = field(default_factory=list)
    sketch: Sketch | None = None
    member: str = ""  # the beam's id (groups items by member); "" for an item not on a beam
    member_title: str = ""  # "RB-5 · Roof · grid D / 2-3"
    checks: list[Check] = field(default_factory=list)
    options: list[str] = field(default_factory=list)  # remedies: options for the engineer of record
    status: str = "open"
    member_photos: list[bytes | Photo] = field(default_factory=list)  # photos of the beam (shown once)
    after: str = ""  # a restraint item: the member rechecked with it corrected (core.remedies.once_corrected)
    logged: str = ""  # when the member was logged: "on the visit of 2026-11-24 08:30" ("" when not recorded)
    loads: str = ""  # the loads and bearing lengths it was rechecked with (reports.inputs.loads_checked_words)


@dataclass(frozen=True)
class Carried:
    """An item carried forward from an earlier notice."""

    number: str
    location: str
    description: str
    status: str


@dataclass(frozen=True)
class Notice:
    """Everything a deficiency notice prints."""

    site_name: str
    address: str
    permit_number: str
    project_number: str
    notice_number: str
    revision: int
    visit_at: str
    issued_on: str
    reviewer: str
    firm: str
    addressed_to: str
    distribution: list[str]
    weather: str
    scope_reviewed: str
    scope_not_reviewed: str
    items: list[Item]
    carried: list[Carried] = field(default_factory=list)
    change_note: str = ""
    cautions: tuple[str, ...] = CAUTIONS
    draft: bool = False  # a preview: marked on every page as not issued
    owner: str = ""
    engineer_of_record: str = ""  # the items' "refer to the engineer of record": who that is
    reviewer_designation: str = ""  # "P.Eng." / "Building Official"
    reviewer_licence: str = ""
    reviewer_phone: str = ""
    reviewer_email: str = ""
    signature_png: bytes | None = None
    seal: bool = False  # the firm's setting: print a seal block
    page_size: str = "letter"  # "letter" or "a4", the firm's setting
    kind: str = "deficiency"  # or "close-out"
    closeout: list[tuple[str, str, str]] = field(default_factory=list)  # (number, outcome, evidence)
    table_rows: list[RowUsed] = field(default_factory=list)  # the table rows the rechecks used, with status
    memory_acknowledgement: str = ""  # "acknowledged by NAME at UTC" of the memory rows, before issue
    # earlier visits whose members carry items here: "2026-11-24 08:30 (scope reviewed then: Level 2 floor ...)"
    earlier_visits: list[str] = field(default_factory=list)
    # members logged on this visit whose recheck raised no finding and that carry no open item, by mark
    no_finding: list[str] = field(default_factory=list)


NO_FINDING_SHOWN = 60  # marks printed in the scope; beyond them, how many more


def no_finding_words(marks: list[str]) -> str:
    """'RB-2, RP-1 (2 members)': the members rechecked with no finding, the first NO_FINDING_SHOWN by mark."""
    shown = ", ".join(marks[:NO_FINDING_SHOWN])
    more = len(marks) - NO_FINDING_SHOWN
    count = f"{len(marks)} member" + ("s" if len(marks) != 1 else "")
    return f"{shown}, and {more} more ({count}; the office register lists them)" if more > 0 else f"{shown} ({count})"


def ordered(items: list[Item]) -> list[Item]:
    """Items as the summary lists them: most urgent first, then by item number.

    Urgency is IMMEDIATE, before loading, before the next review, observation; a priority this version
    does not know comes last.
    """
    return sorted(items, key=lambda i: (PRIORITY_ORDER.get(i.priority, len(PRIORITY_ORDER)), i.number))


def by_member(items: list[Item]) -> list[list[Item]]:
    """Items grouped by member (each beam once), in the order the summary first names the member."""
    groups: dict[str, list[Item]] = {}
    for i, item in enumerate(ordered(items)):
        groups.setdefault(item.member or f"\x00{i}", []).append(item)
    return list(groups.values())


ABBREVIATIONS = frozenset({"no", "nos", "e.g", "i.e", "approx", "incl", "min", "max", "vs", "ltd", "inc", "st", "fig"})


_TYPESET = (
    (re.compile(r"\bmm2\b"), "mm²"),
    (re.compile(r"\bmm3\b"), "mm³"),
    (re.compile(r"\bmm4\b"), "mm⁴"),
    (re.compile(r"\bm3\b"), "m³"),  # kN/m3 too
    (re.compile(r"\^2\b"), "²"),
    (re.compile(r"\bsqrt\("), "√("),
    (re.compile(r"(?<=\S) x (?=\S)"), " × "),  # "b x d", "1.92 x Lu": a product, not the letter
    (re.compile(r"\bphi\b"), "φ"),  # the resistance factor
    (re.compile(r" <= "), " ≤ "),
    (re.compile(r" >= "), " ≥ "),
)


def trace_line(t: FactorTrace) -> str:
    """One factor of a check's trace in one line, as the tablet and the office register print it.

    'CB = 11.61   [confirmed]   CSA O86-19 7.5.6.4.3   (CB = √(Le d / b²))': the value (4 significant figures,
    '-' when there is none), its unit, status, clause and source, units and formulas typeset (``typeset``).
    """
    line = f"{t.symbol} = {trace_value(t.value)} {typeset(t.unit)}".rstrip() + f"   [{t.status.value}]"
    source = typeset(t.source)
    return line + (f"   {t.clause}" if t.clause else "") + (f"   ({source})" if source else "")


def trace_value(value: float | str | None) -> str:
    """A trace value as every reader prints it: 4 significant figures, whole from 1000 up (never an exponent).

    The recheck keeps its values unrounded, so this is their only rounding: the checks table, which rounds
    the same values once too, never shows a neighbouring digit ('KZbg 1.074' beside a trace's '1.075' was
    1.07446 rounded twice). None: '-'.
    """
    if value is None:
        return "-"
    if isinstance(value, float):
        return f"{value:.0f}" if abs(value) >= 1000 else f"{value:.4g}"
    return str(value)


def typeset(text: str) -> str:
    """Engineering notation as printed: mm², m³, b², √(…), b × d, φ, ≤ and ≥ for the recheck's ASCII forms.

    mm2 -> mm², m3 -> m³, b^2 -> b², sqrt( -> √(, "b x d" -> "b × d", phi -> φ, <= -> ≤, >= -> ≥.

    The recheck writes its units and sources in plain ASCII (the JSON of contract 1 keeps them so);
    a printed calculation sheet shows them as an engineer writes them.
    """
    for pattern, replacement in _TYPESET:
        text = pattern.sub(replacement, text)
    return text


def one_line(text: str) -> str:
    """The first sentence of a text, whole (for the summary table): never cut inside a word or a bracket.

    A sentence ends at '; ' or '. ' outside brackets, except a '. ' before a digit or after a common
    abbreviation ('No. 2', 'approx. 5', 'e.g. a'). The table cell wraps it; the item's block prints the
    full text.
    """
    first = text.strip().split("\n")[0]
    depth = 0
    for k, ch in enumerate(first):
        depth += {"(": 1, ")": -1}.get(ch, 0)
        if depth > 0 or ch not in ".;" or first[k + 1 : k + 2] != " ":
            continue
        if ch == ";" or not _abbreviation_dot(first, k):
            return first[:k].rstrip() + ("." if ch == "." else "")
    return first


def _abbreviation_dot(text: str, k: int) -> bool:
    """Whether the '. ' at ``k`` belongs to an abbreviation or a number ('No. 2', 'e.g. the'), not a sentence end."""
    word = text[:k].rsplit(" ", 1)[-1].lower().lstrip("(")
    return word in ABBREVIATIONS or text[k + 2 : k + 3].isdigit()


AT_MM = 0.5  # a purlin this close to a bearing or to the member's end is at it (float error, not a real offset)


def purlin_x(elements: list[tuple[str, float, float]], spacing_mm: float) -> list[float]:
    """Where purlins at ``spacing_mm`` (mm) bear on the member: mm from its left end, left to right.

    ``elements`` are the sketch's (kind, x0 mm, length mm), overhangs and spans in order. The purlins run
    at the recorded spacing along the whole member, overhangs included (common practice: one row at one
    spacing), laid out from the first bearing as the sketch always laid them out: the first purlin one
    spacing from it, then each way to the member's ends, across every later bearing without starting
    again (a span shorter than the spacing carries whatever falls on it). One falling on a bearing or on
    an end of the member is not drawn, as before: the bearing or the end is drawn there.
    """
    spans = [(x0, length) for kind, x0, length in elements if kind == "span"]
    if not spans:
        return []
    bearings = [x0 for x0, _ in spans] + [spans[-1][0] + spans[-1][1]]
    origin, end = bearings[0], max(x0 + length for _, x0, length in elements)
    before, after = math.ceil(origin / spacing_mm), math.ceil((end - origin) / spacing_mm)
    return [
        x
        for x in (origin + k * spacing_mm for k in range(-before, after + 1))
        if AT_MM < x < end - AT_MM and all(abs(x - b) > AT_MM for b in bearings)
    ]


def sketch_for(beam: Beam) -> Sketch:
    """Geometry for the beam sketch: spans, supports, restraint, braces and negative regions."""
    elements = []
    x = 0.0
    if beam.overhang_left_mm:
        elements.append(("overhang", x, beam.overhang_left_mm))
        x += beam.overhang_left_mm
    supports = [x]
    for span in beam.spans_mm:
        elements.append(("span", x, span))
        x += span
        supports.append(x)
    if beam.overhang_right_mm:
        elements.append(("overhang", x, beam.overhang_right_mm))
    labels = []
    for b in beam.bearings:
        states = {b.lateral, b.rotation}
        labels.append(
            "NOT restrained"
            if Restraint.no in states
            else "not visible"
            if Restraint.not_visible in states
            else "restrained"
        )
    not_seen = [
        tuple(
            word
            for word, state in (("lateral displacement", b.lateral), ("rotation about the long axis", b.rotation))
            if state is Restraint.not_visible
        )
        for b in beam.bearings
    ]
    top: list[float] = []
    # every purlin recorded is drawn, fastened or not (the sketch draws an unfastened one hollow and says so),
    # over the overhangs and short spans too
    if beam.top_edge.braced_by is TopBracing.purlins and beam.top_edge.spacing_mm:
        top = purlin_x(elements, beam.top_edge.spacing_mm)
    bottom: list[float] = []
    if beam.bottom_edge.braced_by is BottomBracing.braces and beam.bottom_edge.spacing_mm:
        total = x + beam.overhang_right_mm if beam.overhang_right_mm else x
        bottom = [s for s in _range(0.0, total, beam.bottom_edge.spacing_mm)]
    return Sketch(
        elements=elements,
        supports_x=supports,
        restrained=labels,
        braces_top_x=top,
        braces_bottom_x=bottom,
        negative=[],
        decking=beam.top_edge.braced_by is TopBracing.decking,
        not_seen=not_seen,
        top_fastened=beam.top_edge.fastened,
    )


def _range(start: float, stop: float, step: float) -> list[float]:
    out, x = [], start + step
    while x < stop:
        out.append(x)
        x += step
    return out


def lifting_bearings(result: Recheck) -> dict[str, BearingCheck]:
    """The bearings that lift, by their check line's key ("bearing0"): each gets an uplift row after its own."""
    return {f"bearing{j}": b for j, b in enumerate(result.bearing) if b.uplift_kn is not None}


def uplift_row(b: BearingCheck, result: Recheck, case_number: dict[str, int]) -> tuple[str, str, str, str, str]:
    """The recheck sheet's row for a bearing's factored uplift: check, demand, capacity, utilisation, clause.

    No hold-down is recorded on a beam, so none is taken and the row fails in words. The uplift comes from
    gravity line loads alone (0.9D where dead load counteracts), so the row says where it comes from and that
    a hold-down's real demand, with wind and earthquake added, is the engineer of record's to check. The
    specified uplift (no load factor) follows where there is one; snow in the lifting case, like dead load
    alone, makes it "now" (nobody on site can keep snow off). The clause is the uplift finding's.
    """
    combination = b.uplift_combination or ""
    number = case_number.get(combination)
    case = f"load case {number}" if number is not None else combination
    clause = next(
        (f.clause for f in result.findings or [] if f.code is FindingCode.uplift_at_support),
        "",
    )
    specified = "" if b.uplift_specified_kn is None else f"; specified {b.uplift_specified_kn:.1f} kN"
    if b.lifts_now:
        words = "needs a hold-down now: the dead load alone lifts it"
    elif b.uplift_snow:
        words = "needs a hold-down now: snow can lift it at any time"
    else:
        words = "needs a hold-down"
    return (
        f"uplift, support {b.support}",
        f"factored uplift {b.uplift_kn:.1f} kN" + (f" ({case})" if case else "") + specified,
        "hold-down not recorded: not checked. This uplift comes from gravity loads alone (live or snow load on "
        "the parts that lift the support); wind and earthquake, not checked here, would add to it: the engineer of "
        "record must check the hold-down.",
        words,
        clause,
    )


def key_numbers(result: Recheck) -> list[tuple[str, str]]:
    """The recheck numbers an item prints: the status, then each check line (name, demand vs capacity)."""
    out = [("status", result.status.value.replace("_", " "))]
    for c in check_lines(result):
        util = "-" if c.utilisation is None else utilisation_text(c.utilisation)
        out.append((c.name, f"{c.demand} vs {c.capacity}, utilisation {util}"))
    return out


def checks_for(result: Recheck) -> list[Check]:
    """Demand vs capacity and utilisation for every check (bending per region, shear, bearing, deflection)."""
    return check_lines(result)


def remedy_numbers(beam: Beam | None, result: Recheck) -> list[tuple[str, str]]:
    """Options for the engineer of record: what would make each failing check pass (never a design)."""
    if beam is None or result.status.value == "ok":
        return []
    found = remedies(beam, result)
    if not found:
        return []
    return [("options for the engineer of record (not a design)", "; ".join(r.message for r in found))]


def item_for(
    deficiency: Deficiency,
    beam: Beam | None,
    result: Recheck | None,
    observed: str,
    photos: list[bytes | Photo] | None = None,
    member_title: str = "",
    member_photos: list[bytes | Photo] | None = None,
    status: str = "open",
    gridline: str = "",
    logged: str = "",
    loads_from: str = "",
) -> Item:
    """Build a notice item from a deficiency and (when it concerns a beam) its recheck.

    ``loads_from``: where the beam's line loads came from (``reports.inputs.record_loads_source``).
    """
    sketch = None
    location = deficiency.location
    if beam is not None:
        sketch = _sketch_with_regions(beam, result)
        names = support_names(gridline, len(sketch.supports_x))
        sketch = replace(sketch, support_labels=names, title=member_title or beam.mark)
        location = _supports_named(location, names)
    options = []
    if beam is not None and result is not None and result.status.value != "ok":
        options = [r.message for r in remedies(beam, result)]
    # the app writes an item's location as "..., <region of the finding>": "..., top edge"
    corrected = once_corrected(beam, deficiency.code, location.rsplit(",", 1)[-1].strip()) if beam else None
    return Item(
        member=deficiency.beam_id or "",
        member_title=member_title or (beam.mark if beam is not None else ""),
        checks=checks_for(result) if result is not None else [],
        options=options,
        status=status,
        member_photos=member_photos or [],
        after=corrected.message if corrected is not None else "",
        logged=logged,
        loads=loads_checked_words(beam, loads_from) if beam is not None else "",
        number=deficiency.number,
        location=location,
        observed=observed,
        finding=deficiency.description,
        reference=deficiency.reference,
        action=deficiency.action,
        priority=deficiency.priority,
        due=deficiency.due,
        key_numbers=(key_numbers(result) + remedy_numbers(beam, result)) if result is not None else [],
        photos=photos or [],
        sketch=sketch,
    )


def _supports_named(location: str, names: list[str]) -> str:
    """'support 2' in a location -> 'support 2 (grid D/3)' (see ``support_words``); 'support 12' is left alone."""
    if not names:
        return location
    return re.sub(
        r"\bsupport (\d+)\b",
        lambda m: support_words(int(m[1]), names) if 1 <= int(m[1]) <= len(names) else m[0],
        location,
    )


def member_sketch(beam: Beam, result: Recheck) -> Sketch:
    """The beam's sketch as the notice draws it (supports, bracing, hogging zones), titled by its mark."""
    return replace(_sketch_with_regions(beam, result), title=beam.mark)


def _sketch_with_regions(beam: Beam, result: Recheck | None) -> Sketch:
    sk = sketch_for(beam)
    if result is None:
        return sk
    negative = [(r.x_start_mm, r.x_end_mm) for r in result.bending if r.sign == "negative"]
    return replace(sk, negative=negative)


def header_from(
    site: Site, visit: Visit | None, number: str, revision: int, issued_on: str, distribution: list[str]
) -> dict[str, object]:
    """Header fields of a notice from the site and the visit records."""
    return {
        "site_name": site.name,
        "address": site.address,
        "permit_number": site.permit_number,
        "project_number": site.project_number,
        "notice_number": number,
        "revision": revision,
        "visit_at": visit.started_at if visit else "",
        "issued_on": issued_on,
        "reviewer": visit.reviewer if visit else "",
        "firm": site.firm,
        "addressed_to": site.contractor,
        "owner": site.owner,
        "engineer_of_record": site.engineer_of_record,
        "distribution": distribution,
        "weather": visit.weather if visit else "",
        "scope_reviewed": visit.scope_reviewed if visit else "",
        "scope_not_reviewed": visit.scope_not_reviewed if visit else "",
    }
