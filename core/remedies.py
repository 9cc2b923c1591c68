"""What would make a failing check pass, found with the same clauses (options for the engineer of record).

For every failing or not-established check, each remedy is one change to the contract-1 input
(``{"top_edge.spacing_mm": 1800}``, ``{"bearings.1.rotation": true}``, ``{"d_mm": 608}``) that, applied
to the input and rechecked, passes that check. Remedies are found by rechecking candidate beams:
the largest brace spacing of the compression edge, the bearing length needed, the smallest standard
glulam depth (same width) or dimension-lumber size, and the largest line load carried as built.
They are options for the engineer of record, never a design.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from core import tables
from core.findings import TOP_EDGE_REGION
from core.kinds import FindingCode, MomentSign, Outcome
from core.models import Beam, Material
from core.recheck import recheck
from core.results import CheckLine, Out, Recheck, check_lines, utilisation_text

SPACING_STEP_MM = 50.0
BEARING_STEP_MM = 10.0
LOAD_STEP_KN_M = 0.1


class Remedy(Out):
    """One change to the input that makes one check pass (an option, never a design)."""

    solves: str  # a finding code, or the check: "bending (positive moment)", "deflection"
    change: dict[str, Any]  # contract-1 field path -> new value
    utilisation_after: float
    message: str
    region: str | None = None


def apply_change(data: dict[str, Any], change: dict[str, Any]) -> dict[str, Any]:
    """A copy of the input JSON with each dotted path (list indices as numbers) set to its new value."""
    out = _copy(data)
    for path, value in change.items():
        holder: Any = out
        parts = path.split(".")
        for part in parts[:-1]:
            holder = holder[int(part)] if isinstance(holder, list) else holder.setdefault(part, {})
        last = parts[-1]
        if isinstance(holder, list):
            holder[int(last)] = value
        else:
            holder[last] = value
    return out


def _copy(value: Any) -> Any:
    if isinstance(value, dict):
        return {k: _copy(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_copy(v) for v in value]
    return value


Check = Callable[[Recheck], float | None]  # utilisation of the check (None: not established / absent)


def _rechecked(data: dict[str, Any], change: dict[str, Any]) -> Recheck | None:
    """The recheck of the input with the change applied, or None when the changed beam is refused."""
    try:
        beam = Beam.model_validate(apply_change(data, change))
    except ValueError:
        return None
    return recheck(beam)


def _try(data: dict[str, Any], change: dict[str, Any], check: Check) -> float | None:
    """The check's utilisation after the change, or None when the changed beam is refused or not established."""
    result = _rechecked(data, change)
    return None if result is None else check(result)


def _passes(util: float | None) -> bool:
    return util is not None and util <= 1.0


def _bending(sign: MomentSign | None) -> Check:
    def check(r: Recheck) -> float | None:
        regions = [b for b in r.bending if sign is None or b.sign is sign]
        if any(b.utilisation is None for b in regions):
            return None
        return max((b.utilisation for b in regions if b.utilisation is not None), default=0.0)

    return check


def _shear(r: Recheck) -> float | None:
    return r.shear.utilisation


def _deflection(r: Recheck) -> float | None:
    return r.deflection.utilisation


def _bearing(j: int) -> Check:
    def check(r: Recheck) -> float | None:
        return r.bearing[j].utilisation

    return check


Change = dict[str, Any]
Found = tuple[Change, float] | None

# what a remedy's utilisation is of, in words (a notice goes to a contractor: no internal codes)
_CHECK_WORDS = {
    "shear_overstress": "shear",
    "deflection_exceeds_limit": "deflection",
    "bearing_overstress": "bearing",
    "bearing_restraint_missing": "bending",
}
RESTRAINED_TOO = "and only with the bearing(s) restrained against lateral displacement and rotation as well"
NOT_ALONE = " (over 1.00 by itself: it passes only together with a bending option)"  # a required restraint's option


def _result_words(solves: str, base: Change, util: float) -> str:
    """``"shear utilisation 0.927"``, saying when the change also restrains bearings (``base`` not empty)."""
    words = f"{_CHECK_WORDS.get(solves, solves)} utilisation {util:.3f}"
    return f"{words}, {RESTRAINED_TOO}" if any(k.startswith("bearings.") for k in base) else words


def _largest_passing(
    hi: float, step: float, make: Callable[[float], Change], data: dict[str, Any], check: Check
) -> Found:
    """Largest multiple of ``step`` in [step, hi] whose change passes (bisection), with its utilisation."""
    n_lo, n_hi = 1, math.floor(hi / step + 1e-9)
    if n_hi < n_lo:
        return None
    first = _try(data, make(n_lo * step), check)
    if first is None or first > 1.0:
        return None
    best: tuple[Change, float] = (make(n_lo * step), first)
    while n_lo < n_hi:
        mid = (n_lo + n_hi + 1) // 2
        util = _try(data, make(mid * step), check)
        if util is not None and util <= 1.0:
            n_lo, best = mid, (make(mid * step), util)
        else:
            n_hi = mid - 1
    return best


def _smallest_passing(candidates: list[Change], data: dict[str, Any], check: Check) -> Found:
    """First candidate change (ordered smallest first) that passes, by bisection; each answer is rechecked."""
    lo, hi, found = 0, len(candidates) - 1, None
    while lo <= hi:
        mid = (lo + hi) // 2
        util = _try(data, candidates[mid], check)
        if util is not None and util <= 1.0:
            found, hi = (candidates[mid], util), mid - 1
        else:
            lo = mid + 1
    return found


def _size_candidates(beam: Beam) -> list[Change]:
    if beam.material is Material.glulam:
        depths = sorted(float(r["depth_mm"]) for r in tables.load("glulam_depths").rows)
        return [{"d_mm": d} for d in depths if d > beam.d_mm]
    sizes = [(float(r["b_mm"]), float(r["d_mm"])) for r in tables.load("lumber_sizes").rows]
    bigger = [(b, d) for b, d in sizes if b >= beam.b_mm and d >= beam.d_mm and (b, d) != (beam.b_mm, beam.d_mm)]
    return [{"b_mm": b, "d_mm": d} for b, d in sorted(bigger, key=lambda s: (s[0] * s[1], s[1]))]


def _first_passing(candidates: list[Change], data: dict[str, Any], check: Check) -> Found:
    """First candidate change (ordered smallest first) that passes, scanning in order."""
    for change in candidates:
        util = _try(data, change, check)
        if util is not None and util <= 1.0:
            return change, util
    return None


def _size_remedy(beam: Beam, data: dict[str, Any], base: Change, solves: str, check: Check) -> list[Remedy]:
    candidates = [dict(base, **c) for c in _size_candidates(beam)]
    # lumber: a deeper size can pass a d/b tier and lose KL, so scan the few sizes in order; glulam of one
    # width gains resistance with depth, so bisect the standard depths
    search = _first_passing if beam.material is Material.sawn else _smallest_passing
    found = search(candidates, data, check)
    if found is None:
        return []
    change, util = found
    if beam.material is Material.glulam:
        what = f"a {beam.b_mm:g} x {change['d_mm']:g} mm glulam (same width, the smallest standard depth that passes)"
    else:
        what = f"a {change['b_mm']:g} x {change['d_mm']:g} mm dressed lumber size (the smallest that passes)"
    message = f"{what}: {_result_words(solves, base, util)}"
    return [Remedy(solves=solves, change=change, utilisation_after=util, message=message)]


def _load_remedies(beam: Beam, data: dict[str, Any], base: Change, solves: str, check: Check) -> list[Remedy]:
    out = []
    for name, value in (("snow_kn_m", beam.loads.snow_kn_m), ("live_kn_m", beam.loads.live_kn_m)):
        if value <= 0:
            continue

        def make(v: float, name: str = name) -> Change:
            return dict(base, **{f"loads.{name}": round(v, 2)})

        found = _largest_passing(value, LOAD_STEP_KN_M, make, data, check)
        if found is None:
            continue
        change, util = found
        word = "snow" if name == "snow_kn_m" else "live"
        message = (
            f"as built it carries at most {change[f'loads.{name}']:g} kN/m specified {word} load "
            f"(logged {value:g}): {_result_words(solves, base, util)}"
        )
        out.append(Remedy(solves=solves, change=change, utilisation_after=util, message=message))
    return out


def _restraint_remedy(beam: Beam, data: dict[str, Any], result: Recheck) -> tuple[Change, list[Remedy]]:
    if not any(r.outcome is Outcome.not_established for r in result.bending):
        return {}, []
    base = _restraining(beam)
    util = _try(data, base, _bending(None))
    if util is None:
        return base, []
    message = f"restrain the bearing(s) against lateral displacement and rotation; bending utilisation then {util:.3f}"
    if not _passes(util):
        message += NOT_ALONE
    return base, [
        Remedy(solves="bearing_restraint_missing", change=dict(base), utilisation_after=util, message=message)
    ]


def _restraining(beam: Beam) -> Change:
    """The change that restrains every bearing not seen restrained ({} if all are)."""
    change: Change = {}
    for j, b in enumerate(beam.bearings):
        if not b.restrained:
            change.update({f"bearings.{j}.lateral": True, f"bearings.{j}.rotation": True})
    return change


def _fastening(beam: Beam) -> Change:
    """Purlins or decking logged on the top edge but not fastened: the change that fastens them ({} if none)."""
    return {"top_edge.fastened": True} if beam.top_edge.left_unfastened else {}


def _fasten_remedy(beam: Beam, data: dict[str, Any], base: Change, result: Recheck) -> list[Remedy]:
    """Fasten the logged purlins or decking: the positive-moment bending utilisation it gives, passing or not.

    Listed even when it does not pass by itself, since fastening is required anyway (its own finding): the
    reader learns whether it is enough.
    """
    fasten = _fastening(beam)
    positive = [r for r in result.bending if r.sign is MomentSign.positive]
    if not fasten or not positive or all(r.outcome is Outcome.ok for r in positive):
        return []
    change = dict(base, **fasten)
    util = _try(data, change, _bending(MomentSign.positive))
    if util is None:
        return []
    what = beam.top_edge.braced_by.value
    message = f"fasten the {what} to the top edge as detailed: {_result_words('bending (positive moment)', base, util)}"
    if not _passes(util):
        message += NOT_ALONE
    return [Remedy(solves="compression_edge_unbraced", change=change, utilisation_after=util, message=message)]


def _brace_remedy(beam: Beam, data: dict[str, Any], base: Change, sign: MomentSign) -> list[Remedy]:
    solves = f"bending ({sign} moment)"

    def make(s: float) -> Change:
        if sign is MomentSign.positive:
            return dict(base, **{"top_edge.braced_by": "purlins", "top_edge.spacing_mm": s, "top_edge.fastened": True})
        return dict(base, **{"bottom_edge.braced_by": "braces", "bottom_edge.spacing_mm": s})

    found = _largest_passing(max(beam.spans_mm), SPACING_STEP_MM, make, data, _bending(sign))
    if found is None:
        return []
    change, util = found
    top = sign is MomentSign.positive
    edge = "top edge (fastened purlins or blocking)" if top else "bottom edge (knee braces or blocking)"
    spacing = change["top_edge.spacing_mm" if top else "bottom_edge.spacing_mm"]
    message = f"brace the {edge} at {spacing:g} mm or closer: {_result_words(solves, base, util)}"
    message += _even_layout(beam.spans_mm, spacing, make, data, _bending(sign))
    return [Remedy(solves=solves, change=change, utilisation_after=util, message=message)]


def _even_layout(
    spans_mm: list[float], spacing_mm: float, make: Callable[[float], Change], data: Change, check: Check
) -> str:
    """The braces of a spacing limit laid out as a site would: evenly in each span, the fewest that keep within it.

    The largest passing spacing is a limit (its utilisation at about 1.00), not a layout: on a 7000 mm span,
    "at 6850 mm or closer" is built as one brace at mid-span (common practice: braces at even spacing). The
    limit holds along the whole edge, so each span is laid out alike; the words name every span's layout
    (a brace near one support of a two-span beam leaves the other span's length unbraced). Each space is
    ``floor(span / n)`` mm (never wider than the limit); the recheck takes the widest of them. '' when every
    span is within the limit without an added brace, or the widest space is the limit itself.
    """
    layout = [(span, math.ceil(span / spacing_mm - 1e-9)) for span in spans_mm]
    widest = max(math.floor(span / n) for span, n in layout)
    if all(n < 2 for _, n in layout) or widest >= spacing_mm:
        return ""
    util = _try(data, make(widest), check)
    if util is None:
        return ""
    each = [f"{n} spaces of {math.floor(span / n):g} mm" if n > 1 else "no brace needed" for span, n in layout]
    if len(spans_mm) == 1:
        where = f"over the {spans_mm[0]:g} mm span: {each[0]}"
    elif len(set(spans_mm)) == 1:
        where = f"in each span ({len(spans_mm)} spans of {spans_mm[0]:g} mm): {each[0]}"
    else:
        where = "span by span: " + "; ".join(
            f"span {k} ({span:g} mm) {e}" for k, (span, e) in enumerate(zip(spans_mm, each, strict=True), start=1)
        )
    return f"; laid out evenly {where}, utilisation {util:.3f}"


def _bearing_remedy(beam: Beam, data: dict[str, Any], result: Recheck, j: int) -> list[Remedy]:
    check = result.bearing[j]
    start = math.ceil(beam.bearings[j].length_mm * check.utilisation / BEARING_STEP_MM) * BEARING_STEP_MM
    for length in (start, start + BEARING_STEP_MM, start + 2 * BEARING_STEP_MM):
        change = {f"bearings.{j}.length_mm": length}
        util = _try(data, change, _bearing(j))
        if util is not None and util <= 1.0:
            words = _result_words("bearing_overstress", {}, util)
            message = f"lengthen the bearing at support {check.support} to {length:g} mm: {words}"
            return [Remedy(solves="bearing_overstress", change=change, utilisation_after=util, message=message)]
    return []


def remedies(beam: Beam, result: Recheck | None = None) -> list[Remedy]:
    """Options that make each failing or not-established check pass, each verified by a recheck."""
    result = result or recheck(beam)
    data = beam.model_dump(mode="json")
    codes = {f.code for f in result.findings}
    base, out = _restraint_remedy(beam, data, result)
    for sign in MomentSign:
        regions = [r for r in result.bending if r.sign is sign]
        if not regions or all(r.outcome is Outcome.ok for r in regions) or _passes(_try(data, base, _bending(sign))):
            continue
        solves = f"bending ({sign} moment)"
        if sign is MomentSign.positive:
            out += _fasten_remedy(beam, data, base, result)
        out += _brace_remedy(beam, data, base, sign)
        out += _size_remedy(beam, data, base, solves, _bending(sign))
        out += _load_remedies(beam, data, base, solves, _bending(sign))
    if FindingCode.shear_overstress in codes:
        out += _size_remedy(beam, data, {}, "shear_overstress", _shear)
        out += _load_remedies(beam, data, {}, "shear_overstress", _shear)
    for j, b in enumerate(result.bearing):
        if b.utilisation > 1.0:
            out += _bearing_remedy(beam, data, result, j)
    if FindingCode.deflection_exceeds_limit in codes:
        out += _size_remedy(beam, data, {}, "deflection_exceeds_limit", _deflection)
        out += _load_remedies(beam, data, {}, "deflection_exceeds_limit", _deflection)
    return out


class Corrected(Out):
    """A member rechecked with one kind of restraint item corrected: what the contractor's action leaves."""

    code: str  # the finding code the action answers
    change: dict[str, Any]  # contract-1 field path -> value, as a remedy's
    failing: list[CheckLine]  # the checks that still fail or stay not established
    message: str  # in words for the contractor: enough alone, or what still fails


def _restraint_change(beam: Beam, code: str, region: str) -> tuple[Change, str]:
    """The change that corrects a restraint item of this code, and the action in words ({} and '' if none)."""
    if code == FindingCode.compression_edge_unbraced and region == TOP_EDGE_REGION:
        fasten = _fastening(beam)
        return fasten, (f"the {beam.top_edge.braced_by.value} fastened to the top edge" if fasten else "")
    if code == FindingCode.bearing_restraint_missing:
        change = _restraining(beam)
        return change, (
            "every bearing of this member restrained against lateral displacement and rotation" if change else ""
        )
    return {}, ""


def once_corrected(beam: Beam, code: str, region: str) -> Corrected | None:
    """The member rechecked with the item's restraint corrected (fastened top edge, restrained bearings).

    Answers the contractor's question "is doing this enough?" for the items whose action is a restraint
    the recheck can model: ``compression_edge_unbraced`` in region "top edge" (the purlins or decking
    fastened) and ``bearing_restraint_missing`` (every bearing of the member restrained, as its items
    ask). None for any other item (a bottom-edge brace is directed by the engineer of record; a size or
    a layup is not a restraint) or when the corrected beam cannot be rechecked.
    """
    change, done = _restraint_change(beam, code, region)
    if not change:
        return None
    fixed = _rechecked(beam.model_dump(mode="json"), change)
    if fixed is None:
        return None
    lines = check_lines(fixed)
    failing = [c for c in lines if c.utilisation is None or c.utilisation > 1.0]
    if not failing:
        top = max(lines, key=lambda c: c.utilisation or 0.0)
        message = (
            f"With {done}, every check of {beam.mark} is within capacity (highest utilisation "
            f"{utilisation_text(top.utilisation or 0.0)}, {top.name}); any other item on this member still stands."
        )
    else:
        still = "; ".join(
            f"{c.name} not established"
            if c.utilisation is None
            else f"{c.name} utilisation {utilisation_text(c.utilisation)}"
            for c in failing
        )
        message = (
            f"With {done}, {beam.mark} still fails: {still}. This action alone does not make the member safe "
            "to load; its other items stay open until they are corrected."
        )
    return Corrected(code=code, change=change, failing=failing, message=message)
