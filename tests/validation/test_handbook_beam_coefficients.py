"""Standard handbook beam coefficients for equal spans under uniform load.

Beam diagrams and formulas tables, e.g. the CISC/AISC "Beam Diagrams and Formulas"; from memory, each also
reproduced by pycba in reference section 9). L = 6 m, w = 10 kN/m.
"""

import math

import pytest

from core.analysis import BeamModel

L, W = 6000.0, 10.0  # mm, N/mm


def test_simple_span_midspan_moment_and_deflection():
    # handbook: M = wL^2/8; deflection 5wL^4/(384 EI)
    model = BeamModel([L])
    case = model.case((W,))
    assert case.moment_nmm(0, L / 2) == pytest.approx(W * L**2 / 8)
    assert model.deflections_mm((W,), 1e13)[0][0] == pytest.approx(5 * W * L**4 / (384 * 1e13))
    # the recheck's peak-only path (midspan sample alone for one span): the same handbook value
    assert model.max_abs_deflections_mm((W,), 1e13) == [pytest.approx(5 * W * L**4 / (384 * 1e13), rel=1e-12)]


def test_two_equal_spans():
    # handbook: reactions 0.375, 1.25, 0.375 wL; support moment wL^2/8; zero moment 0.25L each side
    model = BeamModel([L, L])
    case = model.case((W, W))
    assert case.reactions_n == pytest.approx((0.375 * W * L, 1.25 * W * L, 0.375 * W * L))
    assert case.m0_nmm[1] == pytest.approx(-W * L**2 / 8)
    regions = model.regions(case)
    assert [r.sign for r in regions] == ["positive", "negative", "positive"]
    assert regions[1].x0_mm == pytest.approx(0.75 * L)
    assert regions[1].x1_mm == pytest.approx(1.25 * L)
    assert regions[0].m_max_nmm == pytest.approx(9 / 128 * W * L**2)


def test_three_equal_spans():
    # handbook: support moments 0.100 wL^2; zero moment 0.20L (end span side), 0.2764L (centre side)
    model = BeamModel([L, L, L])
    case = model.case((W, W, W))
    assert case.m0_nmm[1] == pytest.approx(-0.1 * W * L**2)
    assert case.m0_nmm[2] == pytest.approx(-0.1 * W * L**2)
    regions = model.regions(case)
    neg = [r for r in regions if r.sign == "negative"]
    assert neg[0].x0_mm == pytest.approx(0.8 * L)
    assert neg[0].x1_mm == pytest.approx(L + (1 - math.sqrt(0.2)) / 2 * L)
    assert neg[0].x1_mm - L == pytest.approx(0.2764 * L, abs=1e-4 * L)
    assert case.reactions_n == pytest.approx((0.4 * W * L, 1.1 * W * L, 1.1 * W * L, 0.4 * W * L))


def test_three_spans_pattern_outer_spans_loaded():
    # reference section 9 (pycba): UDL on spans 1 and 3: support moments 0.050 wL^2, centre span hogging
    model = BeamModel([L, L, L])
    case = model.case((W, 0.0, W))
    assert case.m0_nmm[1] == pytest.approx(-0.05 * W * L**2)
    regions = model.regions(case)
    assert [r.sign for r in regions] == ["positive", "negative", "positive"]
    assert regions[1].x0_mm == pytest.approx(0.9 * L)


def test_cantilever_root_moment():
    # handbook: cantilever under UDL, root moment w a^2 / 2
    model = BeamModel([L], 0, 2000)
    case = model.case((0.0, W))
    assert case.m0_nmm[1] == pytest.approx(-W * 2000**2 / 2)


def _glulam(**over):
    from core.models import Beam

    return Beam.model_validate(_glulam_data(**over))


def _glulam_data(**over):
    data = {
        "mark": "H-1",
        "material": "glulam",
        "species": "D.Fir-L",
        "grade": "24f-E",
        "b_mm": 130,
        "d_mm": 456,
        "spans_mm": [6000],
        "bearings": [{"lateral": True, "rotation": True, "length_mm": 140}] * 2,
        "top_edge": {"braced_by": "purlins", "spacing_mm": 1200, "fastened": True},
        "loads": {"dead_kn_m": 10.0, "live_kn_m": 0.0, "snow_kn_m": 1.0},
        "self_weight": False,
        "top_stamp": "up",
        "use": "roof_no_ceiling",
    }
    data.update(over)
    return data


def test_long_term_deformation_o86_19_is_dead_load_deflection_against_l_over_360():
    # CSA O86-19 5.4.3 (reference o86.md 12 and 13: L/360 under long-term load). Handbook simple span:
    # delta = 5 w L^4 / (384 E I) with w = D = 10 kN/m, E = 12800 MPa (24f-E), I = 130 x 456^3 / 12.
    from core.recheck import recheck

    d = recheck(_glulam()).deflection
    inertia = 130 * 456**3 / 12
    assert d.case.startswith("D (long-term")
    assert d.limit_mm == pytest.approx(6000 / 360)
    assert d.delta_mm == pytest.approx(5 * 10.0 * 6000**4 / (384 * 12800 * inertia), rel=1e-3)


def test_floor_beam_logged_without_use_is_held_to_l_over_360():
    # NBC Table 9.4.3.1 (memory): floors L/360. A beam logged without "use" takes the strictest limit,
    # 6000 / 360 = 16.7 mm, not the roof-without-ceiling L/180 = 33.3 mm.
    from core.recheck import recheck

    data = {"loads": {"dead_kn_m": 1.0, "live_kn_m": 4.0, "snow_kn_m": 0.0}}
    from core.models import Beam

    free = recheck(_glulam(**data)).deflection
    no_use = _glulam_data(**data)
    del no_use["use"]
    r = recheck(Beam.model_validate(no_use))
    assert free.limit_mm == pytest.approx(6000 / 180)  # explicit roof_no_ceiling, L + S
    assert r.deflection.limit_mm == pytest.approx(6000 / 360)
    assert any(f.code == "input_assumed" and "use" in f.message for f in r.findings)
