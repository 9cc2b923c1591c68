"""Every check's trace carries its strength and resistance lines, so a reviewer can redo it by hand.

A closing review found the shear and bearing traces without fv, Fv, fcp, Fcp and the Vr / Qr formula, and
the long-term deformation of CSA O86-19 5.4.3 said to be checked with no value printed.
"""

from __future__ import annotations

import pytest

from core.recheck import recheck
from tests.core.beams import glulam, sawn


def _line(trace, symbol):
    (found,) = [t for t in trace if t.symbol == symbol]
    return found


def test_glulam_shear_trace_redoes_vr():
    """CSA O86-19 7.5.7.2: Vr = phi Fv 2A/3, phi = 0.9, Fv = fv (KD KH KSv KT) (reference o86.md section 7)."""
    beam = glulam()
    r = recheck(beam)
    t = r.shear.trace
    fv = _line(t, "fv").value
    assert fv == 2.0  # D.Fir-L 24f-E fv 2.0 MPa (CSA O86-19 Table 7.3, from memory)
    kd = _line(t, "KD").value
    assert _line(t, "Fv").value == pytest.approx(fv * kd, abs=1e-3)  # dry, untreated glulam: KH = KSv = KT = 1
    vr = 0.9 * fv * kd * 2 * 130 * 456 / 3 / 1000
    assert _line(t, "Vr").value == pytest.approx(vr, abs=0.01)
    assert r.shear.vr_kn == pytest.approx(vr, rel=1e-9)
    assert _line(t, "fv").clause == "CSA O86-19 Table 7.3"


def test_sawn_shear_trace_has_kzv():
    """CSA O86-19 6.5.4.1 (from memory): Vr = phi Fv (2An/3) KZv, KZv the size factor of Table 6.13."""
    beam = sawn()
    r = recheck(beam)
    t = r.shear.trace
    fv = _line(t, "fv").value
    fv_factored = _line(t, "Fv").value
    assert fv_factored == pytest.approx(fv * _line(t, "KD").value, abs=1e-3)  # dry, untreated: KSv = KT = 1
    kzv = float(_line(t, "Vr").source.split("KZv = ")[1])
    assert 1.0 <= kzv <= 1.7  # Table 6.13 factors for 38 x 235 lie in this range (from memory)
    assert r.shear.vr_kn == pytest.approx(0.9 * fv_factored * 2 * 38 * 235 / 3 * kzv / 1000, rel=1e-3)


def test_glulam_shear_volume_method_traces_wr():
    """CSA O86-19 7.5.7.3(a): Wr = phi Fv 0.48 Ag CV Z^-0.18 for Z >= 2.0 m3 (reference o86.md section 7)."""
    beam = glulam(b_mm=215, d_mm=1140, spans_mm=[12000])
    r = recheck(beam)
    wr = _line(r.shear.trace, "Wr")
    z = 0.215 * 1.140 * 12.0
    fv = _line(r.shear.trace, "Fv").value
    assert wr.value == pytest.approx(0.9 * fv * 0.48 * 215 * 1140 * 3.69 * z**-0.18 / 1000, rel=1e-4)


@pytest.mark.parametrize("build", [glulam, sawn])
def test_bearing_trace_redoes_qr(build):
    """Qr = phi Fcp Ab KB KZcp, phi = 0.8, Fcp = fcp (KD KScp KT) (CSA O86-19 6.5.6 / 7.5.9, from memory)."""
    r = recheck(build())
    for b in r.bearing:
        t = b.trace
        fcp = _line(t, "Fcp").value
        assert fcp == pytest.approx(_line(t, "fcp").value * _line(t, "KD").value, abs=1e-3)  # dry: KScp = KT = 1
        qr = 0.8 * fcp * _line(t, "Ab").value * _line(t, "KB").value * _line(t, "KZcp").value / 1000
        assert _line(t, "Qr").value == pytest.approx(qr, abs=0.01)
        assert b.qr_kn == pytest.approx(qr, rel=1e-4)


def test_every_deflection_check_prints_its_value_and_the_governing_one_is_the_result():
    """Simple span under a uniform load: delta = 5 w L^4 / (384 E I) (any beam handbook).

    The three O86-19 checks: L + S against the use limit, D + L + S against L/180 (5.4.2), and the dead load
    alone against L/360 for long-term deformation (5.4.3); each prints its largest deflection.
    """
    beam = glulam()
    r = recheck(beam)
    t = r.deflection.trace
    es = _line(t, "ES").value
    i = 130 * 456**3 / 12
    dead = 2.0 + 4.9 * 0.130 * 0.456  # self-weight at 4.9 kN/m3 (glulam density, from memory)

    def handbook(w_kn_m):
        return 5 * w_kn_m * 7200**4 / (384 * es * i)

    assert _line(t, "deflection (L + S)").value == pytest.approx(handbook(5.0), abs=0.01)
    assert _line(t, "deflection (D + L + S)").value == pytest.approx(handbook(dead + 5.0), abs=0.01)
    long_term = _line(t, "deflection (D, long-term)")
    assert long_term.value == pytest.approx(handbook(dead), abs=0.01)
    assert "L/360" in long_term.source
    assert long_term.clause == "CSA O86-19 5.4.3"
    governing = max(
        (_line(t, s) for s in ("deflection (L + S)", "deflection (D + L + S)", "deflection (D, long-term)")),
        key=lambda x: float(x.source.rsplit("utilisation ", 1)[1]),
    )
    assert governing.value == pytest.approx(r.deflection.delta_mm, abs=0.01)


def test_an_overhang_states_its_deflection_span():
    """A cantilever's deflection limit divides twice its length (common practice); the limit line says so."""
    r = recheck(glulam(spans_mm=[6000], overhang_right_mm=2000))
    limit = _line(r.deflection.trace, "limit")
    assert "twice its length" in limit.source
    assert "twice" not in _line(recheck(glulam()).deflection.trace, "limit").source


def test_the_volume_method_sets_the_total_load_against_wr_in_the_checks_table():
    """CSA O86-19 7.5.7.3(a) compares the total factored load W with Wr, not a shear force with Vr.

    A 12 m simple span carries W = w L and its end shear is W/2 (statics): the table must say W, not Vf.
    """
    from core.results import check_lines

    r = recheck(glulam(b_mm=215, d_mm=1140, spans_mm=[12000]))
    (line,) = [c for c in check_lines(r) if c.key == "shear"]
    assert line.demand == f"Wf {r.shear.vf_kn:.1f} kN (total factored load)"
    assert line.capacity.startswith("Wr ")
    assert r.bearing[0].qf_kn == pytest.approx(r.shear.vf_kn / 2, rel=1e-6)  # each end carries W/2
    (simple,) = [c for c in check_lines(recheck(glulam())) if c.key == "shear"]
    assert simple.demand.startswith("Vf ")


def test_bending_fb_line_shows_its_product():
    """Fb = fb (KD KH KSb KT) (CSA O86-19 7.5.6.5.1): the line multiplies the printed factors."""
    r = recheck(glulam())
    t = r.bending[0].trace
    fb = _line(t, "Fb")
    factors = [float(x) for x in fb.source.split(" = ")[-1].split(" x ")]
    product = 1.0
    for f in factors:
        product *= f
    assert fb.value == pytest.approx(product, abs=1e-3)
    assert factors[0] == 30.6  # D.Fir-L 24f-E fb positive, CSA O86-19 Table 7.3 (from memory)
