"""The beam analysis (``core.analysis``) against handbook beam formulas and plain algebra.

Sources, named beside each check: the cubic Hermite shape functions of a beam element (any finite-element
text: N1 = 1 - 3x^2 + 2x^3, N2 = x - 2x^2 + x^3, N3 = 3x^2 - 2x^3, N4 = -x^2 + x^3 at x = xi); the
fixed-end beam under uniform load, y = w x^2 (L - x)^2 / (24 EI) (handbook beam table); the simple span
under uniform load, largest deflection 5wL^4/(384 EI) at midspan, and the cantilever, w a^4/(8 EI) at the
tip (handbook beam tables); the roots of a quadratic (algebra).
"""

import pytest

from core.analysis import SAMPLES_PER_ELEMENT, BeamModel, _deflection_samples, _quadratic_roots


def test_deflection_samples_are_the_hermite_shape_functions_and_the_fixed_end_udl_curve():
    rows = _deflection_samples()
    assert len(rows) == SAMPLES_PER_ELEMENT + 1
    for s, (xi, n1, n2, n3, n4, c) in enumerate(rows):
        assert xi == pytest.approx(s / SAMPLES_PER_ELEMENT, abs=1e-15)
        assert n1 == pytest.approx(1 - 3 * xi**2 + 2 * xi**3, abs=1e-12)  # Hermite N1
        assert n2 == pytest.approx(xi - 2 * xi**2 + xi**3, abs=1e-12)  # Hermite N2 (per unit length)
        assert n3 == pytest.approx(3 * xi**2 - 2 * xi**3, abs=1e-12)  # Hermite N3
        assert n4 == pytest.approx(-(xi**2) + xi**3, abs=1e-12)  # Hermite N4 (per unit length)
        # fixed-end beam, unit load, L = EI = 1: y = x^2 (1 - x)^2 / 24
        assert c == pytest.approx(xi**2 * (1 - xi) ** 2 / 24, abs=1e-15)
    # a sample between the ends tells the powers apart: at xi = 1/2, N1 = N3 = 1/2, N2 = -N4 = 1/8, c = 1/384
    assert SAMPLES_PER_ELEMENT % 2 == 0  # so midspan is a sample
    assert rows[SAMPLES_PER_ELEMENT // 2][1:] == pytest.approx((0.5, 0.125, 0.5, -0.125, 1 / 384), abs=1e-15)


@pytest.mark.parametrize(
    ("a", "b", "c", "roots"),
    [
        (1.0, -3.0, 2.0, [1.0, 2.0]),  # (x - 1)(x - 2)
        (1.0, -2.0, 1.0, [1.0, 1.0]),  # (x - 1)^2: a double root is a root
        (1.0, 0.0, 1.0, []),  # x^2 + 1: no real root
        (0.0, 2.0, -4.0, [2.0]),  # linear: 2x - 4
        (0.0, 0.0, 1.0, []),  # constant
        (2.0, 0.0, 0.0, [0.0]),  # 2x^2: the root 0
    ],
)
def test_quadratic_roots(a, b, c, roots):
    assert sorted(_quadratic_roots(a, b, c)) == pytest.approx(roots, abs=1e-12)


def test_overhangs_of_any_length_are_elements_and_supports_sit_at_their_inner_ends():
    # geometry: with overhangs a and c on a span L the supports are at x = a and a + L, the beam is a + L + c long
    model = BeamModel([6000.0], overhang_left_mm=0.5, overhang_right_mm=0.5)
    assert [e.name for e in model.elements] == ["overhang left", "span 1", "overhang right"]
    assert model.support_x_mm == (0.5, 6000.5)
    assert model.total_length_mm == 6001.0
    model = BeamModel([4000.0, 3000.0], overhang_right_mm=1500.0)
    assert model.support_x_mm == (0.0, 4000.0, 7000.0)
    assert model.total_length_mm == 8500.0


def test_largest_deflection_and_where_it_is():
    w, ei = 5.0, 1e13  # N/mm, N*mm^2
    # simple span: 5wL^4/(384 EI) at midspan
    ((delta, at),) = BeamModel([6000.0]).deflections_mm((w,), ei)
    assert delta == pytest.approx(5 * w * 6000.0**4 / (384 * ei), rel=1e-9)
    assert at == pytest.approx(3000.0, abs=1e-9)
    # cantilever part: the tip of the right overhang, x = L + a, deflects the most on that element
    model = BeamModel([6000.0], overhang_right_mm=2000.0)
    (_, _), (tip, at_tip) = model.deflections_mm((0.0, w), ei)
    assert at_tip == pytest.approx(8000.0, abs=1e-9)
    # overhang a loaded alone on a simple span L: tip deflection w a^3 (4L + 3a) / (24 EI) (handbook)
    assert tip == pytest.approx(w * 2000.0**3 * (4 * 6000.0 + 3 * 2000.0) / (24 * ei), rel=1e-9)
