"""Beam analysis checked against ``pycba`` 1.0.2 (PyPI), run in the test as an independent solver.

Random simple, overhanging and continuous beams (2-5 spans) under uniform loads that differ per
span (pattern loading): reactions and support moments agree to 1e-6 relative.
"""

import numpy as np
import pycba
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from core.analysis import BeamModel


def _pycba(spans_m, oh_left_m, oh_right_m, w_kn_m):
    lengths = ([oh_left_m] if oh_left_m else []) + list(spans_m) + ([oh_right_m] if oh_right_m else [])
    n_nodes = len(lengths) + 1
    restraint = []
    for node in range(n_nodes):
        free_end = (node == 0 and oh_left_m) or (node == n_nodes - 1 and oh_right_m)
        restraint += [0, 0] if free_end else [-1, 0]
    loads = [[i + 1, 1, w, 0, 0] for i, w in enumerate(w_kn_m) if w > 0]
    beam = pycba.BeamAnalysis(lengths, 1.0, R=restraint, LM=loads)
    beam.analyze(npts=400)
    return beam.beam_results


@settings(max_examples=60, deadline=None)
@given(
    spans=st.lists(st.floats(min_value=2.0, max_value=12.0), min_size=1, max_size=5),
    oh=st.tuples(st.sampled_from([0.0, 0.0, 1.2, 2.5]), st.sampled_from([0.0, 0.0, 1.5, 3.0])),
    data=st.data(),
)
def test_reactions_and_moments_match_pycba(spans, oh, data):
    n_el = len(spans) + (oh[0] > 0) + (oh[1] > 0)
    w = data.draw(st.lists(st.sampled_from([0.0, 2.0, 7.5, 15.0]), min_size=n_el, max_size=n_el))
    if not any(w):
        w[0] = 5.0
    ref = _pycba(spans, oh[0], oh[1], w)
    ours = BeamModel([s * 1000 for s in spans], oh[0] * 1000, oh[1] * 1000).case(tuple(w))
    ref_r = [r for r in np.atleast_1d(ref.R)]
    assert ours.reactions_n == pytest.approx([r * 1000 for r in ref_r], rel=1e-6, abs=1e-6)
    # moments at every element's left end (kN*m in pycba, N*mm here)
    model = BeamModel([s * 1000 for s in spans], oh[0] * 1000, oh[1] * 1000)
    for e, el in enumerate(model.elements):
        mid = el.length_mm / 2
        x_m = (el.x0_mm + mid) / 1000
        ref_m = float(np.interp(x_m, ref.results.x, ref.results.M))
        assert ours.moment_nmm(e, mid) / 1e6 == pytest.approx(ref_m, rel=2e-3, abs=2e-3 * max(1.0, abs(ref_m)))


def test_cantilever_tip_deflection_matches_pycba():
    # 6 m back span + 2 m overhang, 10 kN/m on the overhang only, EI = 1e13 N*mm^2 (= 1e4 kN*m^2)
    ref = _pycba([6.0], 0.0, 2.0, [0.0, 10.0])
    tip_ref_mm = -float(ref.results.D[-1]) * 1000 / 1e4
    ours = BeamModel([6000], 0, 2000).deflections_mm((0.0, 10.0), 1e13)
    assert ours[1][0] == pytest.approx(tip_ref_mm, rel=1e-3)
    # the recheck's peak-only path: every sample of every element, the same tip value
    peaks = BeamModel([6000], 0, 2000).max_abs_deflections_mm((0.0, 10.0), 1e13)
    assert peaks[1] == pytest.approx(abs(tip_ref_mm), rel=1e-3)


@pytest.mark.parametrize(
    ("spans", "oh", "w"),
    [
        ([5.0], (0.0, 0.0), [7.5]),
        ([4.0, 6.0, 5.0], (1.5, 0.0), [2.0, 9.0, 0.0, 4.0]),
        ([6.0, 6.0], (0.0, 2.0), [0, 5, 8]),
    ],
)
def test_peak_deflections_match_pycba(spans, oh, w):
    # EI = 1e13 N*mm^2 (1e4 kN*m^2); pycba's largest |deflection| of each element against ours
    ref = _pycba(spans, oh[0], oh[1], w)
    model = BeamModel([s * 1000 for s in spans], oh[0] * 1000, oh[1] * 1000)
    ours = model.max_abs_deflections_mm(tuple(float(x) for x in w), 1e13)
    xs, ds = np.asarray(ref.results.x), np.asarray(ref.results.D)
    for e, el in enumerate(model.elements):
        inside = (xs >= el.x0_mm / 1000 - 1e-9) & (xs <= el.x1_mm / 1000 + 1e-9)
        ref_mm = float(np.max(np.abs(ds[inside]))) * 1000 / 1e4
        assert ours[e] == pytest.approx(ref_mm, rel=5e-3, abs=1e-6), el.name


# --- Whole-beam rechecks against pycba: uplift and counteracting dead load (issue 16) ---------------


def _overhang_beam(span_mm, overhang_mm, dead, snow=0.0, live=0.0, **over):
    from core.models import Beam

    data = {
        "mark": "U-1",
        "material": "glulam",
        "species": "D.Fir-L",
        "grade": "24f-E",
        "b_mm": 130,
        "d_mm": 456,
        "spans_mm": [span_mm],
        "overhang_right_mm": overhang_mm,
        "bearings": [{"lateral": True, "rotation": True, "length_mm": 140}] * 2,
        "top_edge": {"braced_by": "purlins", "spacing_mm": 1200, "fastened": True},
        "loads": {"dead_kn_m": dead, "live_kn_m": live, "snow_kn_m": snow},
        "self_weight": False,
        "top_stamp": "up",
        "use": "roof_no_ceiling",
    }
    data.update(over)
    return Beam.model_validate(data)


def test_uplift_at_back_span_support_is_the_pycba_reaction_under_0_9d_and_snow_on_the_overhang():
    # NBC 4.1.3.2: 0.9D on the back span (it counteracts), 1.25D + 1.5S on the overhang.
    # 6 m span, 3 m overhang, D = 1, S = 5 kN/m: w = (0.9, 1.25 + 7.5) kN/m; pycba gives R1 < 0.
    from core.recheck import recheck

    ref = _pycba([6.0], 0.0, 3.0, [0.9 * 1.0, 1.25 * 1.0 + 1.5 * 5.0])
    r1_ref = float(np.atleast_1d(ref.R)[0])
    assert r1_ref < 0
    r = recheck(_overhang_beam(6000, 3000, dead=1.0, snow=5.0))
    assert r.bearing[0].uplift_kn == pytest.approx(-r1_ref, rel=1e-6)
    uplift = [f for f in r.findings if f.code == "uplift_at_support"]
    assert len(uplift) == 1
    assert uplift[0].region == "support 1"
    assert f"{-r1_ref:.1f} kN" in uplift[0].message
    assert float(np.atleast_1d(_pycba([6.0], 0.0, 3.0, [1.0, 1.0]).R)[0]) > 0  # dead load alone holds it down
    # but snow lifts it, and snow cannot be kept off (common practice, as for an overstress under snow): immediate
    assert uplift[0].priority.value == "immediate"
    # under specified loads, D on both and D + S on the overhang (no load factor), pycba still gives R1 < 0
    specified = float(np.atleast_1d(_pycba([6.0], 0.0, 3.0, [1.0, 1.0 + 5.0]).R)[0])
    assert specified < 0
    assert r.bearing[0].uplift_specified_kn == pytest.approx(-specified, rel=1e-6)
    assert f"still lifts by {-specified:.1f} kN" in uplift[0].message


def test_uplift_under_dead_load_alone_is_immediate():
    # 3 m span, 4 m overhang, D = 2 kN/m: pycba R1 < 0 under the specified dead load as it stands.
    from core.recheck import recheck

    assert float(np.atleast_1d(_pycba([3.0], 0.0, 4.0, [2.0, 2.0]).R)[0]) < 0
    r = recheck(_overhang_beam(3000, 4000, dead=2.0, snow=1.0))
    uplift = [f for f in r.findings if f.code == "uplift_at_support"]
    assert uplift
    assert uplift[0].priority.value == "immediate"


def test_split_dead_load_governs_back_span_moment_as_pycba_gives():
    # reference o86.md 13 worked check: 6 m back span, 2 m overhang, D = 5, L = 10 kN/m on the back span.
    # 1.25D + 1.5L on the span and 0.9D on the overhang (it relieves the span): pycba's largest sagging
    # moment; by hand R1 = 21.25*3 - 4.5*2^2/(2*6) = 62.25 kN, M = R1^2 / (2*21.25) = 91.18 kN*m
    # (uniform 1.25D gives 89.47 kN*m).
    from core.recheck import recheck

    ref = _pycba([6.0], 0.0, 2.0, [1.25 * 5 + 1.5 * 10, 0.9 * 5])
    m_ref = float(np.max(ref.results.M))
    assert m_ref == pytest.approx(62.25**2 / (2 * 21.25), rel=2e-3)
    r = recheck(_overhang_beam(6000, 2000, dead=5.0, live=10.0))
    span = next(b for b in r.bending if b.region == "span 1" and b.sign == "positive")
    assert span.mf_knm == pytest.approx(m_ref, rel=2e-3)
    assert "0.9D on overhang right" in span.combination
    uniform = recheck(_overhang_beam(6000, 2000, dead=5.0, live=10.0, dead_load_pattern="uniform"))
    span_u = next(b for b in uniform.bending if b.region == "span 1" and b.sign == "positive")
    assert span_u.mf_knm == pytest.approx(89.47, rel=1e-3)  # hand: (21.25*3 - 6.25*4/12)^2 / (2*21.25)
    assert any(f.code == "modelling_option" for f in uniform.findings)
