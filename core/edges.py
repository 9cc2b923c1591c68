"""The compression edge of a bending region and its unsupported length Lu (CSA O86-19 7.5.6.4.1, 6.5.3.2).

A region in positive moment has its top edge in compression; a region in negative moment (over an
interior support, at a cantilever root) has its bottom edge in compression. Lu is the distance
between real supports of *that* edge. Defaults follow reference o86.md section 13:

- negative moment: Lu is the distance between actual restraints of the bottom edge (support to
  support when nothing braces it; a bearing logged without restraint does not count). Taking a
  point of zero moment as a brace is an option the reviewer must choose (``negative_lu``), flagged.
- "both edges held in line" (lumber 9:1 tier) needs the bottom edge braced at <= 610 mm.
- sawn lumber past its d/b tier: the glulam method with Lu = spacing of the points that restrain
  rotation as well as displacement (bridging or blocking, bearings), never zero.
"""

from __future__ import annotations

from itertools import pairwise
from typing import NamedTuple

from core.analysis import BeamModel, Region
from core.clauses.stability import bearing_restraint_required
from core.effective_length import RegionKind
from core.kinds import Edge, ElementKind, MomentSign, TraceStatus
from core.models import Beam, BottomBracing, NegativeLu, TopBracing

PLAIN_REGION = RegionKind(simple_span=False, cantilever=False, braced_between=False)  # immutable default

BOTH_EDGES_MAX_SPACING_MM = 610.0  # reference o86.md section 13 (judgement; no Canadian spacing found)
DIRECT_JOIST_MAX_SPACING_MM = 610.0  # O86-19 6.5.3.2 tier 6.5 (memory, reference 2.2)


class EdgeSupport(NamedTuple):
    """How a region's compression edge is held.

    Immutable; a named tuple rather than a frozen dataclass (whose ``__init__`` sets each of these fourteen
    fields through ``object.__setattr__``, about 2 us an edge even compiled): the search finds one per region key.
    """

    edge: Edge
    continuous: bool
    lu_mm: float
    description: str
    status: TraceStatus
    purlins_in_line: bool
    held_directly: bool
    bridging: bool
    both_edges: bool
    unbraced: bool  # no bracing at all between supports / zero-moment points
    lu_rotation_mm: float  # spacing of points restraining rotation too (bridging, bearings), mm
    between_mm: float  # the longest stretch between restrained bearings over the region: ``rotation_how`` reads it
    option: str = ""  # a non-default modelling option the reviewer chose, named in the trace
    # what the region is, for the Table 7.4 row
    kind: RegionKind = PLAIN_REGION


def _edge(
    *,
    edge: Edge,
    continuous: bool,
    lu_mm: float,
    description: str,
    status: TraceStatus,
    purlins_in_line: bool,
    held_directly: bool,
    bridging: bool,
    both_edges: bool,
    unbraced: bool,
    lu_rotation_mm: float,
    between_mm: float,
    option: str = "",
    kind: RegionKind = PLAIN_REGION,
) -> EdgeSupport:
    """An EdgeSupport of these fields, built positionally in their order.

    A named tuple binds keyword arguments in interpreted code (~0.7 us an edge, ~0.3 us positional); this
    compiled function's keywords cost nothing, so the edges below stay written by name.
    """
    return EdgeSupport(
        edge,
        continuous,
        lu_mm,
        description,
        status,
        purlins_in_line,
        held_directly,
        bridging,
        both_edges,
        unbraced,
        lu_rotation_mm,
        between_mm,
        option,
        kind,
    )


def restraint_points_mm(beam: Beam, model: BeamModel, assume_restrained: bool) -> list[float]:
    """Positions (mm from the left end) of the bearings that hold the member against displacement and rotation.

    A bearing counts when both restraints were seen, when the d/b rule does not require them
    (CSA O86-19 7.5.6.3.1), or when ``assume_restrained`` (the upper bound of a not-established region).
    """
    required = bearing_restraint_required(beam.d_mm, beam.b_mm)
    return [
        x
        for x, bearing in zip(model.support_x_mm, beam.bearings, strict=True)
        if assume_restrained or not required or bearing.restrained
    ]


def _longest_interval_mm(points: list[float], total_mm: float, x0: float, x1: float) -> float:
    """Longest stretch between consecutive points (or a free end) that overlaps (x0, x1), mm (0.0 when none does).

    A plain loop over the sorted cuts (each stretch is positive: the cuts are distinct): the largest of the
    same differences as a ``max`` over pairs, without a generator.
    """
    cuts = sorted({0.0, total_mm, *points})
    tol = 1e-6 * total_mm
    longest = 0.0
    for i in range(1, len(cuts)):
        a, b = cuts[i - 1], cuts[i]
        if a < x1 - tol and b > x0 + tol and b - a > longest:
            longest = b - a
    return longest


def _bracing(beam: Beam) -> tuple[bool, bool, bool, bool, float | None]:
    top, bottom = beam.top_edge, beam.bottom_edge
    top_direct = top.fastened is True and (
        top.braced_by is TopBracing.decking
        or (
            top.braced_by is TopBracing.purlins
            and top.spacing_mm is not None
            and top.spacing_mm <= DIRECT_JOIST_MAX_SPACING_MM
        )
    )
    bottom_spacing = bottom.spacing_mm if bottom.braced_by is BottomBracing.braces else None
    bottom_close = bottom_spacing is not None and bottom_spacing <= BOTH_EDGES_MAX_SPACING_MM
    bridging = beam.bridging_spacing_mm is not None and beam.bridging_spacing_mm <= 8 * beam.d_mm
    return top_direct, bottom_close, top_direct and bottom_close, bridging, bottom_spacing


def _rotation_lu(beam: Beam, between_mm: float) -> float:
    """Lu between points restraining rotation: bridging or blocking if recorded, else the bearings."""
    bridging = beam.bridging_spacing_mm
    if bridging is not None and bridging < between_mm:
        return bridging
    return between_mm


def rotation_how(beam: Beam, edge: EdgeSupport) -> str:
    """How ``_rotation_lu`` found an edge's rotation Lu, in words: formatted only for a trace."""
    bridging = beam.bridging_spacing_mm
    if bridging is not None and bridging < edge.between_mm:
        return f"bridging or blocking at {bridging:g} mm"
    return f"bearings {edge.between_mm:.0f} mm apart (no bridging recorded)"


def compression_edge(beam: Beam, model: BeamModel, region: Region, assume_restrained: bool = False) -> EdgeSupport:
    """The compression edge of a region and its unsupported length Lu (mm), with how it was found.

    Its ``kind`` (for the Table 7.4 row): the span of a single-span beam, a region holding an overhang,
    and braced between supports (neither held continuously nor unbraced).
    """
    simple = len(model.elements) == 1
    cantilever = any(model.elements[e].kind is ElementKind.overhang for e in region.elements)
    return _compression_edge(
        beam, model, region, assume_restrained, (_KINDS[simple, cantilever, False], _KINDS[simple, cantilever, True])
    )


# every RegionKind, built once: (simple_span, cantilever, braced_between) -> kind
_KINDS = {
    (s, c, b): RegionKind(simple_span=s, cantilever=c, braced_between=b)
    for s in (False, True)
    for c in (False, True)
    for b in (False, True)
}


def _compression_edge(
    beam: Beam, model: BeamModel, region: Region, assume_restrained: bool, kinds: tuple[RegionKind, RegionKind]
) -> EdgeSupport:
    """The edge with its kind: kinds holds the region's kind when not braced between supports, then when braced."""
    plain, braced = kinds
    top = beam.top_edge
    top_direct, bottom_close, both, bridging, bottom_spacing = _bracing(beam)
    points = restraint_points_mm(beam, model, assume_restrained)
    between = _longest_interval_mm(points, model.total_length_mm, region.x0_mm, region.x1_mm)
    lu_rot = _rotation_lu(beam, between)
    if region.sign is MomentSign.positive:
        fastened = top.fastened is True
        if top.braced_by is TopBracing.decking and fastened:
            return _edge(
                edge=Edge.top,
                continuous=True,
                lu_mm=0.0,
                description="top edge held continuously by fastened decking",
                status=TraceStatus.memory,
                purlins_in_line=True,
                held_directly=True,
                bridging=bridging,
                both_edges=both,
                unbraced=False,
                kind=plain,
                lu_rotation_mm=lu_rot,
                between_mm=between,
            )
        if top.braced_by is TopBracing.purlins and fastened and top.spacing_mm is not None:
            return _edge(
                edge=Edge.top,
                continuous=False,
                lu_mm=min(top.spacing_mm, between),
                description=f"top edge braced by fastened purlins at {top.spacing_mm:g} mm",
                status=TraceStatus.memory,
                purlins_in_line=True,
                held_directly=top_direct,
                bridging=bridging,
                both_edges=both,
                unbraced=False,
                kind=braced,
                lu_rotation_mm=lu_rot,
                between_mm=between,
            )
        if top.braced_by is TopBracing.none:
            why = ""
        elif top.fastened is None:
            why = f" ({top.braced_by.value} fastening not recorded: assumed not fastened)"
        else:
            why = f" ({top.braced_by.value} not fastened)"
        return _edge(
            edge=Edge.top,
            continuous=False,
            lu_mm=between,
            description=f"top edge unbraced between bearings{why}",
            status=TraceStatus.memory,
            purlins_in_line=False,
            held_directly=False,
            bridging=False,
            both_edges=False,
            unbraced=True,
            kind=plain,
            lu_rotation_mm=lu_rot,
            between_mm=between,
        )
    option = ""
    if beam.negative_lu is NegativeLu.zero_moment_point:
        inside = [x for x in points if region.x0_mm < x < region.x1_mm]
        cuts = sorted({region.x0_mm, region.x1_mm, *inside})
        zone = max(b - a for a, b in pairwise(cuts))
        option = "zero-moment point as brace (reviewer's option, not the default)"
        how = f"{zone:.0f} mm from a restrained bearing to the point of zero moment; {option}"
    else:
        zone = between
        how = f"{zone:.0f} mm between real restraints of the bottom edge (a point of zero moment is not a brace)"
    if bottom_spacing is not None:
        return _edge(
            edge=Edge.bottom,
            continuous=False,
            lu_mm=min(bottom_spacing, zone),
            description=f"bottom edge braced at {bottom_spacing:g} mm; {how}",
            status=TraceStatus.memory,
            purlins_in_line=True,
            held_directly=bottom_close,
            bridging=bridging,
            both_edges=both,
            unbraced=False,
            kind=braced,
            lu_rotation_mm=min(lu_rot, zone),
            between_mm=between,
            option=option,
        )
    return _edge(
        edge=Edge.bottom,
        continuous=False,
        lu_mm=zone,
        description=f"bottom edge unbraced; {how}",
        status=TraceStatus.memory,
        purlins_in_line=False,
        held_directly=False,
        bridging=False,
        both_edges=False,
        unbraced=True,
        kind=plain,
        lu_rotation_mm=lu_rot,
        between_mm=between,
        option=option,
    )


def unrestrained_elements(beam: Beam, model: BeamModel) -> set[int]:
    """Elements next to a bearing whose required restraint is missing or not visible."""
    if not bearing_restraint_required(beam.d_mm, beam.b_mm):
        return set()
    out: set[int] = set()
    for j, bearing in enumerate(beam.bearings):
        if not bearing.restrained:
            node = model.support_nodes[j]
            out.update(e for e in (node - 1, node) if 0 <= e < len(model.elements))
    return out
