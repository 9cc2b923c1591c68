"""The recheck's lean paths give the very numbers of the plain ones they stand in for.

Machinery, not engineering (the engineering of each is checked against handbooks and pycba in
tests/validation): the peak-only deflection path against every sample of ``deflections_mm``, its
skip bound never hiding a deflection at or over the caller's threshold, and the region numbers of
the load-case search against ``regions``.
"""

import functools

from hypothesis import given, settings
from hypothesis import strategies as st

from core.analysis import BeamModel

layouts = st.tuples(
    st.lists(st.integers(min_value=1200, max_value=12000), min_size=1, max_size=5),
    st.sampled_from([0, 0, 900, 2500]),
    st.sampled_from([0, 0, 1200, 3000]),
)


def _loads(model: BeamModel, data: st.DataObject) -> tuple[float, ...]:
    n = len(model.elements)
    return tuple(data.draw(st.lists(st.sampled_from([0.0, 0.4, 2.5, 7.3, 15.0]), min_size=n, max_size=n)))


@settings(max_examples=80, deadline=None)
@given(layout=layouts, data=st.data())
def test_peak_deflections_are_the_largest_sample_exactly(layout, data):
    model = BeamModel(list(layout[0]), layout[1], layout[2])
    w, ei = _loads(model, data), 3.7e12
    full = [abs(peak) for peak, _ in model.deflections_mm(w, ei)]
    assert model.max_abs_deflections_mm(w, ei) == full  # bit for bit: the golden output rests on it


@settings(max_examples=80, deadline=None)
@given(layout=layouts, data=st.data(), scale=st.sampled_from([0.3, 0.9, 0.999999, 1.0, 1.5]))
def test_skip_bound_never_hides_a_deflection_at_or_over_the_threshold(layout, data, scale):
    model = BeamModel(list(layout[0]), layout[1], layout[2])
    w, ei = _loads(model, data), 3.7e12
    full = model.max_abs_deflections_mm(w, ei)
    below = [scale * max(x or 0.0 for x in full)] * len(full)
    got = model.max_abs_deflections_mm(w, ei, below)
    for value, skipped_or_same, threshold in zip(full, got, below, strict=True):
        assert skipped_or_same in (None, value)
        if skipped_or_same is None:
            assert value is not None
            assert value < threshold


@settings(max_examples=80, deadline=None)
@given(layout=layouts, data=st.data())
def test_region_numbers_are_the_regions(layout, data):
    model = BeamModel(list(layout[0]), layout[1], layout[2])
    case = model.case(_loads(model, data))
    spans = model.region_spans(case)
    assert [[r.x0_mm, r.x1_mm, r.sign, r.m_max_nmm, r.elements] for r in model.regions(case)] == spans


@settings(max_examples=60, deadline=None)
@given(layout=layouts, data=st.data())
def test_region_name_rests_on_elements_where_the_search_keys_it_so(layout, data):
    # the load-case search names a negative-moment or one-element region once per (sign, elements)
    from core.kinds import MomentSign
    from core.recheck.bending import region_name

    model = BeamModel(list(layout[0]), layout[1], layout[2])
    first: dict[tuple[object, ...], str] = {}
    for _ in range(6):
        for region in model.regions(model.case(_loads(model, data))):
            if len(region.elements) == 1 or region.sign is MomentSign.negative:
                name = region_name(model, region)
                assert first.setdefault((region.sign, region.elements), name) == name


def _pieces_by_lists(model: BeamModel, result, e: int) -> list[tuple[float, float, int, float, float]]:
    """The element pieces as first written (lists of cut ends, local positions and moments): the reference."""
    from core.analysis import _quadratic_roots

    origin, length = model._origins[e], model.lengths[e]
    w, v0, m0 = result.w_n_mm[e], result.v0_n[e], result.m0_nmm[e]
    lo, hi = 1e-6 * length, length * (1 - 1e-6)
    roots = [root for root in _quadratic_roots(-0.5 * w, v0, m0) if lo < root < hi]
    cuts = [0.0, *sorted(roots), length] if roots else [0.0, length]
    ends = [origin + c for c in cuts]
    local = [x - origin for x in ends]
    moments = [abs(m0 + v0 * x - 0.5 * w * x * x) for x in local]
    xv = v0 / w if w != 0.0 else None
    out = []
    for i in range(len(cuts) - 1):
        a, b = local[i], local[i + 1]
        peak = moments[i] if moments[i] >= moments[i + 1] else moments[i + 1]
        if xv is not None and a < xv < b:
            at_xv = abs(m0 + v0 * xv - 0.5 * w * xv * xv)
            peak = at_xv if at_xv > peak else peak
        mid = 0.5 * (ends[i] + ends[i + 1]) - origin
        out.append((ends[i], ends[i + 1], e, peak, m0 + v0 * mid - 0.5 * w * mid * mid))
    return out


@settings(max_examples=120, deadline=None)
@given(layout=layouts, data=st.data())
def test_element_pieces_one_cut_at_a_time_are_the_list_version_bit_for_bit(layout, data):
    model = BeamModel(list(layout[0]), layout[1], layout[2])
    case = model.case(_loads(model, data))
    for e in range(len(model.elements)):
        got: list[tuple[float, float, int, float, float]] = []
        model._element_pieces(case, e, got)
        assert got == _pieces_by_lists(model, case, e)


def _case_by_sums(model: BeamModel, w: tuple[float, ...]) -> tuple[tuple[float, ...], ...]:
    """A load case as first written (sums from 0.0 over the loaded unit cases, reactions support by support)."""
    n_el = len(model.elements)
    acc = [0.0] * (3 * n_el)
    for c, wc in enumerate(w):
        if wc != 0.0:
            acc = [a + wc * b for a, b in zip(acc, model._unit_rows[c], strict=True)]
    v0, m0, vend = acc[:n_el], acc[n_el : 2 * n_el], acc[2 * n_el :]
    reactions = []
    for node in model.support_nodes:
        r = 0.0
        if node > 0:
            r += vend[node - 1]
        if node < n_el:
            r += v0[node]
        reactions.append(r)
    return tuple(w), tuple(v0), tuple(m0), tuple(reactions)


@settings(max_examples=120, deadline=None)
@given(layout=layouts, data=st.data())
def test_case_sums_are_the_plain_sums_bit_for_bit(layout, data):
    model = BeamModel(list(layout[0]), layout[1], layout[2])
    w = _loads(model, data)
    got = model.case(w)
    want = _case_by_sums(model, w)
    assert tuple(got) == want
    # the sign of a zero too (repr tells -0.0 from 0.0): printed results rest on it
    assert repr(tuple(got)) == repr(want)


@settings(max_examples=60, deadline=None)
@given(layout=layouts, data=st.data(), restrained=st.booleans())
def test_edge_kind_is_what_the_edge_is(layout, data, restrained):
    # compression_edge gives each edge its Table 7.4 kind from the branch it takes: the kind must be
    # what the edge says (braced between supports = neither held continuously nor unbraced)
    from core.edges import compression_edge
    from core.effective_length import RegionKind
    from core.kinds import ElementKind
    from tests.core.golden import beams

    model = BeamModel(list(layout[0]), layout[1], layout[2])
    beam = data.draw(st.sampled_from(beams(60)))
    beam = beam.model_copy(update={"bearings": beam.bearings[:1] * (len(model.support_nodes))})
    for region in model.regions(model.case(_loads(model, data))):
        edge = compression_edge(beam, model, region, assume_restrained=restrained)
        assert edge.kind == RegionKind(
            simple_span=len(model.elements) == 1,
            cantilever=any(model.elements[e].kind is ElementKind.overhang for e in region.elements),
            braced_between=not edge.continuous and not edge.unbraced,
        )


def _spans_by_two_passes(model: BeamModel, result) -> list[list[object]]:
    """The regions as first written: every piece, the largest peak, then the pieces joined: the reference."""
    from core.kinds import MomentSign

    pieces: list[tuple[float, float, int, float, float]] = []
    for e in range(len(model.elements)):
        pieces += _pieces_by_lists(model, result, e)
    scale = max((p[3] for p in pieces), default=0.0)
    spans: list[list[object]] = []
    for x0, x1, e, peak, m_mid in pieces:
        if scale == 0.0 or peak <= 1e-9 * scale:
            sign = spans[-1][2] if spans else MomentSign.positive
        else:
            sign = MomentSign.positive if m_mid > 0 else MomentSign.negative
        if spans and spans[-1][2] == sign:
            last = spans[-1]
            last[1] = x1
            last[3] = max(last[3], peak)
            if e not in last[4]:
                last[4] = (*last[4], e)
        else:
            spans.append([x0, x1, sign, peak, (e,)])
    return spans


@settings(max_examples=120, deadline=None)
@given(layout=layouts, data=st.data())
def test_region_spans_are_the_two_pass_regions_bit_for_bit(layout, data):
    model = BeamModel(list(layout[0]), layout[1], layout[2])
    case = model.case(_loads(model, data))
    assert model.region_spans(case) == _spans_by_two_passes(model, case)


def _governing_plain(bending, shear, bearing, deflection):
    """The governing check as first written (two passes for unrated regions, then max over (utilisation, index))."""
    from core.kinds import Outcome

    for outcome in (Outcome.not_established, Outcome.not_permitted):
        for i, r in enumerate(bending):
            if r.utilisation is None and r.outcome is outcome:
                return i, None
    utils = [r.utilisation for r in bending] + [shear.utilisation]
    utils += [b.utilisation for b in bearing] + [deflection.utilisation]
    util, best = max((u, i) for i, u in enumerate(utils) if u is not None)
    return best, util


_UTILS = st.sampled_from([0.0, -0.0, 0.3, 0.8, 0.8, 1.0, 1.2, float("inf")])
_REGION = st.one_of(
    st.tuples(_UTILS, st.sampled_from(["ok", "overstress"])),
    st.tuples(st.none(), st.sampled_from(["not_established", "not_permitted"])),
)


@settings(max_examples=200, deadline=None)
@given(
    regions=st.lists(_REGION, min_size=1, max_size=5),
    shear=_UTILS,
    bearings=st.lists(_UTILS, min_size=2, max_size=4),
    deflection=_UTILS,
)
def test_governing_check_is_the_plain_two_pass_version(regions, shear, bearings, deflection):
    # one pass in order (core/governing.py) against the first form: the same index and the very same number
    from core.kinds import Outcome
    from core.results import governing_check

    r = _governing_result()
    bending = [r.bending[0].model_copy(update={"utilisation": u, "outcome": Outcome(o)}) for u, o in regions]
    sh = r.shear.model_copy(update={"utilisation": shear})
    be = [r.bearing[0].model_copy(update={"utilisation": u}) for u in bearings]
    de = r.deflection.model_copy(update={"utilisation": deflection})
    got, want = governing_check(bending, sh, be, de), _governing_plain(bending, sh, be, de)
    assert got[0] == want[0]
    assert repr(got[1]) == repr(want[1])  # -0.0 and 0.0 told apart


@functools.cache
def _governing_result():
    """One recheck for every example."""
    from core.recheck import recheck
    from tests.core.beams import glulam

    return recheck(glulam())
