"""Checks that tell apart the survivors of the s20 mutation run on main (bench/mutation_survivors.md).

Each expected value comes from outside the code under test; the source is named beside each check.
"""

import pytest

from core.analysis import BeamModel, Region
from core.edges import Edge, _longest_interval_mm, compression_edge
from core.kinds import MomentSign
from core.loads import applicable, gravity_combinations
from core.member import size_factor_kzb
from tests.core.beams import glulam, sawn

R = {"lateral": True, "rotation": True, "length_mm": 300}


def test_restraints_that_only_touch_a_region_do_not_set_its_lu():
    # O86-19 7.5.6.4.1: Lu is the distance between points of lateral support of the region's compression
    # edge. Restraints at 0, 6000 and 10000 mm; the region 6000-10000 mm lies in the 4000 mm stretch only,
    # the 6000 mm stretch before it ends where the region starts (geometry).
    assert _longest_interval_mm([6000.0], 10000.0, 6000.0, 10000.0) == pytest.approx(4000.0)
    assert _longest_interval_mm([6000.0], 10000.0, 0.0, 6000.0) == pytest.approx(6000.0)


def test_negative_moment_puts_the_bottom_edge_in_compression_even_when_braced():
    # statics (common practice): over an interior support the moment is negative (hogging), the bottom
    # fibres are in compression; the bottom-edge braces recorded are that edge's lateral supports.
    beam = glulam(
        b_mm=80,
        d_mm=380,
        spans_mm=[6000, 6000],
        bearings=[R] * 3,
        bottom_edge={"braced_by": "braces", "spacing_mm": 1500},
    )
    model = BeamModel(beam.spans_mm, beam.overhang_left_mm, beam.overhang_right_mm)
    region = Region(x0_mm=4500.0, x1_mm=7500.0, sign=MomentSign.negative, m_max_nmm=1.0e7, elements=(0, 1))
    edge = compression_edge(beam, model, region)
    assert edge.edge is Edge.bottom
    assert edge.lu_mm <= 1500.0


def test_companion_load_that_is_zero_adds_no_combination():
    # NBC Table 4.1.3.2.-A: with S = 0, 1.25D + 1.5L + 0.5S is 1.25D + 1.5L (case 2); with L = 0,
    # 1.25D + 1.5S + 0.5L is 1.25D + 1.5S (case 3): the same load, so it is not a separate case.
    combos = {c.name: c for c in gravity_combinations(counteracting_dead=False)}
    assert not applicable(combos["1.25D + 1.5L + 0.5S"], live_n_mm=2.0, snow_n_mm=0.0)
    assert not applicable(combos["1.25D + 1.5S + 0.5L"], live_n_mm=0.0, snow_n_mm=3.0)
    assert applicable(combos["1.25D + 1.5L + 0.5S"], live_n_mm=2.0, snow_n_mm=3.0)


def test_a_measured_thickness_between_the_columns_takes_the_lower_factors():
    # O86-19 Table 6.13 (reference o86.md 2.1) lists 38-64 mm and 89-102 mm thicknesses; a measured 65-88 mm
    # is neither, and the 38-64 column's factors are the lower in every row (1.4 against 1.5 at 140 mm deep),
    # so the unfavourable reading is the 38-64 column (common practice: an unlisted size is read on the safe side).
    assert size_factor_kzb(65, 140)[0] == pytest.approx(1.4)
    assert size_factor_kzb(88, 140)[0] == pytest.approx(1.4)
    assert size_factor_kzb(89, 140)[0] == pytest.approx(1.5)
    assert size_factor_kzb(64, 140)[0] == pytest.approx(1.4)


def test_sawn_depth_past_400_mm_is_refused_by_name_and_range():
    # common brief: bad input names the field and the allowed range; O86-19 Table 6.13's rows end at the
    # largest dressed lumber depths, the model's limit for sawn lumber is 400 mm.
    with pytest.raises(ValueError, match=r"d_mm = 410 for sawn lumber; allowed: 0 < d_mm <= 400"):
        sawn(d_mm=410)


UNRESTRAINED = [{"lateral": False, "rotation": False, "length_mm": 300}]
TWO_SPANS_UNRESTRAINED = {  # bottom edge unbraced over the middle support, bearings not restrained
    "mark": "X-3", "material": "glulam", "species": "D.Fir-L", "grade": "24f-E", "b_mm": 80, "d_mm": 380,
    "spans_mm": [6000, 6000], "bearings": UNRESTRAINED * 3, "top_stamp": "up", "use": "roof_no_ceiling",
    "top_edge": {"braced_by": "purlins", "spacing_mm": 1200, "fastened": True},
    "loads": {"dead_kn_m": 2.0, "live_kn_m": 0.0, "snow_kn_m": 3.0},
}  # fmt: skip
ONE_SPAN_UNRESTRAINED = glulam(
    d_mm=380,
    bearings=UNRESTRAINED * 2,
    top_edge={"braced_by": "purlins", "spacing_mm": 7200, "fastened": True},
    loads={"dead_kn_m": 3.0, "live_kn_m": 0.0, "snow_kn_m": 6.0},
).model_dump(mode="json")


@pytest.mark.parametrize(
    ("data", "sign", "key"),
    [
        (ONE_SPAN_UNRESTRAINED, MomentSign.positive, "top_edge.spacing_mm"),
        (TWO_SPANS_UNRESTRAINED, MomentSign.negative, "bottom_edge.spacing_mm"),
    ],
)
def test_a_brace_remedy_on_unrestrained_bearings_restrains_them_too(data, sign, key):
    # O86-19 7.5.6.4 / 6.5.3.2 and reference o86.md 13: Lu between braces presumes bearings held against
    # lateral displacement and rotation; without that KL is not established, so a brace option that
    # leaves the bearings as found solves nothing. Each option is verified by a recheck of the beam as found.
    from core.models import Beam
    from core.recheck import recheck
    from core.remedies import apply_change, remedies

    beam = Beam.model_validate(data)
    braces = [r for r in remedies(beam) if r.solves == f"bending ({sign} moment)" and key in r.change]
    assert len(braces) == 1
    after = recheck(Beam.model_validate(apply_change(beam.model_dump(mode="json"), braces[0].change)))
    regions = [b for b in after.bending if b.sign is sign]
    assert all(b.utilisation is not None and b.utilisation <= 1.0 for b in regions)


def _cases(beam):
    from core.member import member_properties
    from core.recheck.cases import load_cases

    model = BeamModel(beam.spans_mm, beam.overhang_left_mm, beam.overhang_right_mm)
    return load_cases(beam, member_properties(beam), model)


def test_one_simple_span_has_no_counteracting_dead_load_case():
    # NBC 4.1.3.2 (Table 4.1.3.2.-A note): 0.9D applies where dead load counteracts; on one simple span
    # dead load adds to every moment, shear and reaction (statics), so only the 1.25D cases are formed.
    names = {c.combo.name for c in _cases(glulam(loads={"dead_kn_m": 2.0, "live_kn_m": 1.0, "snow_kn_m": 3.0}))}
    assert names == {"1.4D", "1.25D + 1.5L", "1.25D + 1.5L + 0.5S", "1.25D + 1.5S", "1.25D + 1.5S + 0.5L"}


def test_dead_load_alone_is_one_case_on_a_continuous_beam():
    # NBC 4.1.5.3 (common practice): patterns (loaded/unloaded spans) are for variable loads; 1.4D has
    # none, so it is one case on the whole beam however many spans it has.
    cases = _cases(glulam(spans_mm=[6000, 6000], bearings=[R] * 3))
    assert [c.pattern for c in cases if c.combo.dead_load_only] == [""]


def test_a_bearing_lengthened_to_exactly_its_resistance_is_the_remedy():
    # CSA O86-19 7.5.9: Qr is linear in the bearing length, so a bearing used at 2.0 over 200 mm is used at
    # exactly 1.0 over 400 mm; NBC 4.1.3.1 / O86-19 4.2: Qr >= Qf passes, so 400 mm is the remedy, not 410.
    # The live load was found by bisection so that 400 mm gives 1.0 to the last bit (checked first).
    from core.models import Beam
    from core.recheck import recheck
    from core.remedies import remedies
    from tests.core.test_remedies import _beam_data

    base = _beam_data("short bearings on a heavy girder")
    loads = dict(base["loads"], live_kn_m=38.049213333333334)

    def beam(length_mm):
        return Beam.model_validate(dict(base, bearings=[dict(R, length_mm=length_mm)] * 2, loads=loads))

    assert recheck(beam(400)).bearing[0].utilisation == 1.0
    short = beam(200)
    r = recheck(short)
    assert r.bearing[0].utilisation == pytest.approx(2.0, rel=1e-12)
    found = [x for x in remedies(short, r) if x.solves == "bearing_overstress"]
    assert found[0].change == {"bearings.0.length_mm": 400.0}
    assert found[0].utilisation_after == 1.0
