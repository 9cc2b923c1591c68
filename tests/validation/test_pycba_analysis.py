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
