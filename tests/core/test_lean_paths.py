"""The recheck's lean paths give the very numbers of the plain ones they stand in for.

Machinery, not engineering (the engineering of each is checked against handbooks and pycba in
tests/validation): the peak-only deflection path against every sample of ``deflections_mm``, its
skip bound never hiding a deflection at or over the caller's threshold, and the region numbers of
the load-case search against ``regions``.
"""

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
