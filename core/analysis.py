"""Linear-elastic analysis of straight prismatic beams under uniform line loads.

A direct stiffness solver (Euler-Bernoulli elements, two degrees of freedom per node) for a
simple span, a span with overhangs, or a beam continuous over up to six supports. The beam is
solved once for a unit uniform load on each element; any load case (a line load per element, so
pattern loading too) is then a weighted sum of those unit responses, which keeps a recheck fast.

Units: lengths mm, loads N/mm (1 N/mm = 1 kN/m), moments N*mm, forces N. Sign convention:
sagging moment positive, loads positive downward, deflection reported positive downward.
Pure Python: the tablet carries no numpy or scipy.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, NamedTuple

from core.kinds import ElementKind, MomentSign

SAMPLES_PER_ELEMENT = 24


@dataclass(frozen=True, kw_only=True)
class Element:
    """One element: a span between supports or an overhang (cantilever) with a free end."""

    name: str
    kind: ElementKind
    x0_mm: float
    length_mm: float

    @property
    def x1_mm(self) -> float:
        """Right end position, mm."""
        return self.x0_mm + self.length_mm


class Region(NamedTuple):
    """A stretch between consecutive points of zero moment, with one moment sign.

    Immutable; a named tuple rather than a frozen dataclass (whose ``__init__`` sets each field through
    ``object.__setattr__``, about 1.5 us a region even compiled): the bending search builds several a beam.
    """

    x0_mm: float
    x1_mm: float
    sign: MomentSign
    m_max_nmm: float  # largest |M| in the region, N*mm
    elements: tuple[int, ...]  # indices of the elements the region overlaps

    @property
    def length_mm(self) -> float:
        """Length of the region (between points of zero moment), mm."""
        return self.x1_mm - self.x0_mm


class CaseResult(NamedTuple):
    """Response to one load case: end shear and moment per element and support reactions.

    Immutable; a named tuple rather than a frozen dataclass because a recheck builds one per load case
    (21 for three spans) and a tuple is built in a fraction of the time.
    """

    w_n_mm: tuple[float, ...]
    v0_n: tuple[float, ...]  # internal shear at each element's left end, N (up on left face +)
    m0_nmm: tuple[float, ...]  # internal moment at each element's left end, N*mm (sagging +)
    reactions_n: tuple[float, ...]  # one per support, upward positive

    def moment_nmm(self, element: int, x_mm: float) -> float:
        """Bending moment at local position x within an element, N*mm."""
        return self.m0_nmm[element] + self.v0_n[element] * x_mm - 0.5 * self.w_n_mm[element] * x_mm * x_mm

    def max_abs_shear_n(self, lengths: tuple[float, ...]) -> float:
        """Largest |V| anywhere on the beam (it occurs at an element end), N."""
        out = 0.0
        for i, length in enumerate(lengths):
            v1 = self.v0_n[i] - self.w_n_mm[i] * length
            out = max(out, abs(self.v0_n[i]), abs(v1))
        return out


def _solve(matrix: list[list[float]], rhs: list[list[float]]) -> list[list[float]]:
    """Gaussian elimination with partial pivoting for several right-hand sides (columns)."""
    n = len(matrix)
    aug = [matrix[i][:] + rhs[i][:] for i in range(n)]
    m = len(rhs[0]) if rhs else 0
    for col in range(n):
        pivot = max(range(col, n), key=lambda r: abs(aug[r][col]))
        if abs(aug[pivot][col]) < 1e-300:
            msg = "beam is a mechanism: check supports and overhangs"
            raise ValueError(msg)
        aug[col], aug[pivot] = aug[pivot], aug[col]
        piv = aug[col][col]
        for r in range(col + 1, n):
            f = aug[r][col] / piv
            if f != 0.0:
                row_r, row_c = aug[r], aug[col]
                for k in range(col, n + m):
                    row_r[k] -= f * row_c[k]
    out = [[0.0] * m for _ in range(n)]
    for col in range(n - 1, -1, -1):
        for j in range(m):
            s = aug[col][n + j]
            for k in range(col + 1, n):
                s -= aug[col][k] * out[k][j]
            out[col][j] = s / aug[col][col]
    return out


class BeamModel:
    """A beam's geometry solved for unit loads; evaluate any load case by superposition."""

    def __init__(self, spans_mm: list[float], overhang_left_mm: float = 0.0, overhang_right_mm: float = 0.0):
        """Build elements and supports, then solve for a unit UDL on each element (EI = 1)."""
        if not spans_mm:
            msg = "spans_mm must hold at least one span"
            raise ValueError(msg)
        elements: list[Element] = []
        x = 0.0
        if overhang_left_mm > 0:
            elements.append(
                Element(name="overhang left", kind=ElementKind.overhang, x0_mm=x, length_mm=overhang_left_mm)
            )
            x += overhang_left_mm
        for i, span in enumerate(spans_mm):
            elements.append(Element(name=f"span {i + 1}", kind=ElementKind.span, x0_mm=x, length_mm=span))
            x += span
        if overhang_right_mm > 0:
            elements.append(
                Element(name="overhang right", kind=ElementKind.overhang, x0_mm=x, length_mm=overhang_right_mm)
            )
            x += overhang_right_mm
        self.elements = tuple(elements)
        self.lengths = tuple(e.length_mm for e in elements)
        self.total_length_mm = x
        self._origins = tuple(e.x0_mm for e in elements)
        first_support = 1 if overhang_left_mm > 0 else 0
        self.support_nodes = tuple(range(first_support, first_support + len(spans_mm) + 1))
        self.support_x_mm = tuple(self._node_x(n) for n in self.support_nodes)
        self._solve_unit_cases()
        # the samples where an element's largest deflection can be (every one; midspan alone for one span)
        candidates = (_SAMPLES[SAMPLES_PER_ELEMENT // 2],) if len(self.elements) == 1 else _SAMPLES
        self._peak_samples = tuple(sample[1:] for sample in candidates)
        self._shape_max = tuple(max(abs(x) for x in column) for column in zip(*self._peak_samples, strict=True))

    def _node_x(self, node: int) -> float:
        return sum(self.lengths[:node])

    def _solve_unit_cases(self) -> None:
        """Solve for a unit UDL on each element (EI = 1): displacements and element end forces per case."""
        n_el = len(self.elements)
        n_dof = 2 * (n_el + 1)
        restrained = {2 * n for n in self.support_nodes}
        index = {d: i for i, d in enumerate(d for d in range(n_dof) if d not in restrained)}
        self._k_el = [_element_stiffness(length) for length in self.lengths]
        disp_free = _solve(*self._assemble(index))
        # displacement of every dof for unit case c
        self._disp: list[list[float]] = []
        for c in range(n_el):
            d = [0.0] * n_dof
            for dof, i in index.items():
                d[dof] = disp_free[i][c]
            self._disp.append(d)
        self._end_forces()

    def _assemble(self, index: dict[int, int]) -> tuple[list[list[float]], list[list[float]]]:
        """Global stiffness over the free dofs and the unit-UDL load vector of each element (columns)."""
        n_el = len(self.elements)
        k_global = [[0.0] * len(index) for _ in index]
        loads = [[0.0] * n_el for _ in index]
        for e, length in enumerate(self.lengths):
            k = self._k_el[e]
            fe = _fixed_end_udl(length)
            free = [(a, index[da]) for a, da in enumerate((2 * e, 2 * e + 1, 2 * e + 2, 2 * e + 3)) if da in index]
            for a, ia in free:
                loads[ia][e] += fe[a]
                for b, ib in free:
                    k_global[ia][ib] += k[a][b]
        return k_global, loads

    def _end_forces(self) -> None:
        """Element end forces per unit case: f = k d - fe (fe only on the loaded element)."""
        n_el = len(self.elements)
        self._v0 = [[0.0] * n_el for _ in range(n_el)]  # [case][element]
        self._m0 = [[0.0] * n_el for _ in range(n_el)]
        self._vend = [[0.0] * n_el for _ in range(n_el)]
        for c in range(n_el):
            d = self._disp[c]
            for e, length in enumerate(self.lengths):
                de = d[2 * e : 2 * e + 4]
                k = self._k_el[e]
                f = [sum(k[a][b] * de[b] for b in range(4)) for a in range(4)]
                if e == c:
                    fe = _fixed_end_udl(length)
                    f = [f[a] - fe[a] for a in range(4)]
                self._v0[c][e] = f[0]
                self._m0[c][e] = -f[1]
                self._vend[c][e] = f[2]
        self._unit_rows = [(*self._v0[c], *self._m0[c], *self._vend[c]) for c in range(n_el)]
        # per support: the index in a case's sums of the end shear on its left and of v0 on its right
        # (3 n_el, one past the sums, holds 0.0 where there is no element on that side)
        none = 3 * n_el
        self._reaction_terms = tuple(
            (2 * n_el + node - 1 if node > 0 else none, node if node < n_el else none) for node in self.support_nodes
        )

    def case(self, w_n_mm: tuple[float, ...]) -> CaseResult:
        """Solve a load case given the line load on each element (N/mm, downward positive)."""
        n_el = len(self.lengths)
        if len(w_n_mm) != n_el:
            msg = f"w_n_mm has {len(w_n_mm)} entries; the beam has {n_el} elements"
            raise ValueError(msg)
        # every element's v0, m0 and end shear in one row per unit case: the same sums, one pass per case
        # (in place: a comprehension per case costs more); one more 0.0 for a support with no element on a side
        rows = self._unit_rows
        size = 3 * n_el
        acc = [0.0] * (size + 1)
        for c, w in enumerate(w_n_mm):
            if w == 0.0:
                continue
            row = rows[c]
            for i in range(size):
                acc[i] += w * row[i]
        # each reaction: 0.0 + the end shear of the element on its left + v0 of the element on its right
        reactions = tuple((0.0 + acc[i]) + acc[j] for i, j in self._reaction_terms)
        # positional, in field order (w_n_mm, v0_n, m0_nmm, reactions_n): keywords cost more on a named tuple
        return CaseResult(tuple(w_n_mm), tuple(acc[:n_el]), tuple(acc[n_el : 2 * n_el]), reactions)

    def _nodal_displacements(self, w_n_mm: tuple[float, ...]) -> list[float]:
        """Nodal (v, theta) of every node times EI, by superposition of the unit cases (in case order)."""
        d = [0.0] * len(self._disp[0])
        for c, w in enumerate(w_n_mm):
            if w:
                dc = self._disp[c]
                for i in range(len(d)):
                    d[i] += w * dc[i]
        return d

    def deflections_mm(self, w_n_mm: tuple[float, ...], ei_nmm2: float) -> list[tuple[float, float]]:
        """Downward deflection at sample points of each element: (max, at) per element, mm."""
        d = self._nodal_displacements(w_n_mm)
        out = []
        for e, length in enumerate(self.lengths):
            v1, t1, v2, t2 = d[2 * e : 2 * e + 4]
            lt1, lt2, wl4 = length * t1, length * t2, w_n_mm[e] * length**4
            downs = [
                -(n1 * v1 + a2 * lt1 + n3 * v2 + a4 * lt2 - wl4 * c) / ei_nmm2 for _, n1, a2, n3, a4, c in _SAMPLES
            ]
            peak = max(downs, key=abs)  # the first sample of largest |deflection|
            if abs(peak) > 0.0:
                at = self.elements[e].x0_mm + _SAMPLES[downs.index(peak)][0] * length
                out.append((peak, at))
            else:
                out.append((0.0, 0.0))
        return out

    def max_abs_deflections_mm(
        self, w_n_mm: tuple[float, ...], ei_nmm2: float, below_mm: list[float] | None = None
    ) -> list[float | None]:
        """Largest |deflection| at the sample points of each element, mm (the same numbers as ``deflections_mm``).

        The same sums as ``deflections_mm`` at each sample, divided by EI once per element (division by
        a positive number keeps the order of correctly rounded values, so the maximum is the same float).
        A model of one span and no overhang carries a symmetric deflected shape under its uniform load,
        so its peak sample is the midspan one: only that sample is evaluated.

        below_mm: per element, a deflection the caller no longer needs to know about: an element whose
        upper bound (each term at its largest shape-function value, plus a 1e-9 margin over rounding) is
        under it gives None, its samples not evaluated.
        """
        d = self._nodal_displacements(w_n_mm)
        samples = self._peak_samples
        n1m, a2m, n3m, a4m, cm = self._shape_max
        out: list[float | None] = []
        for e, length in enumerate(self.lengths):
            v1, t1, v2, t2 = d[2 * e : 2 * e + 4]
            lt1, lt2, wl4 = length * t1, length * t2, w_n_mm[e] * length**4
            if below_mm is not None:
                bound = abs(v1) * n1m + abs(lt1) * a2m + abs(v2) * n3m + abs(lt2) * a4m + abs(wl4) * cm
                if bound * (1 + 1e-9) / ei_nmm2 < below_mm[e]:
                    out.append(None)
                    continue
            peak = max([abs(n1 * v1 + a2 * lt1 + n3 * v2 + a4 * lt2 - wl4 * c) for n1, a2, n3, a4, c in samples])
            out.append(peak / ei_nmm2)
        return out

    def regions(self, result: CaseResult) -> list[Region]:
        """Split the beam at points of zero moment into regions of one sign."""
        return [
            Region(x0_mm=a, x1_mm=b, sign=sg, m_max_nmm=m, elements=els)
            for a, b, sg, m, els in self.region_spans(result)
        ]

    def region_spans(self, result: CaseResult) -> list[list[Any]]:
        """``regions`` as plain lists [x0_mm, x1_mm, sign, m_max_nmm, elements] (no objects: a load-case search)."""
        pieces: list[tuple[float, float, int, float, float]] = []  # (x0, x1, element, peak |M|, M at mid)
        scale = 0.0
        for e in range(len(self.lengths)):
            peak = self._element_pieces(result, e, pieces)
            if peak > scale:  # max over the pieces' peaks, element by element
                scale = peak
        return _merged(pieces, scale)

    def _element_pieces(
        self, result: CaseResult, e: int, pieces: list[tuple[float, float, int, float, float]]
    ) -> float:
        """Append the pieces of one element between its points of zero moment; return their largest peak.

        Each piece: global ends, the element, the largest |M| (at an end or where the shear is zero) and
        the moment at its middle, by ``CaseResult.moment_nmm``'s arithmetic (each cut's |M| found once).
        """
        origin, length = self._origins[e], self.lengths[e]
        w, v0, m0 = result.w_n_mm[e], result.v0_n[e], result.m0_nmm[e]
        xv = v0 / w if w != 0.0 else None  # where the shear is zero
        # one cut after the other (no lists of ends, local positions and moments): a cut's global
        # position is origin + its local one, and the moment is taken at (that position - origin)
        x0 = origin + 0.0
        a = x0 - origin
        m_a = abs(m0 + v0 * a - 0.5 * w * a * a)
        top = 0.0
        for cut in _cuts(-0.5 * w, v0, m0, length):
            x1 = origin + cut
            b = x1 - origin
            m_b = abs(m0 + v0 * b - 0.5 * w * b * b)
            peak = m_a if m_a >= m_b else m_b
            if xv is not None and a < xv < b:
                at_xv = abs(m0 + v0 * xv - 0.5 * w * xv * xv)
                peak = at_xv if at_xv > peak else peak
            mid = 0.5 * (x0 + x1) - origin
            pieces.append((x0, x1, e, peak, m0 + v0 * mid - 0.5 * w * mid * mid))
            if peak > top:
                top = peak
            x0, a, m_a = x1, b, m_b
        return top


def _merged(pieces: list[tuple[float, float, int, float, float]], scale: float) -> list[list[Any]]:
    """Join consecutive pieces of one moment sign into regions [x0, x1, sign, largest |M|, elements].

    A piece whose peak is at most 1e-9 of the largest (scale) takes the sign of the region before it.
    """
    spans: list[list[Any]] = []
    last: list[Any] | None = None
    positive, negative = MomentSign.positive, MomentSign.negative
    tiny = 1e-9 * scale
    for x0, x1, e, peak, m_mid in pieces:
        if scale == 0.0 or peak <= tiny:
            sign = positive if last is None else last[2]
        else:
            sign = positive if m_mid > 0 else negative
        if last is not None and last[2] is sign:
            last[1] = x1
            if peak > last[3]:  # max(last[3], peak) without the call
                last[3] = peak
            if e not in last[4]:
                last[4] = (*last[4], e)
        else:
            last = [x0, x1, sign, peak, (e,)]
            spans.append(last)
    return spans


def _cuts(a: float, b: float, c: float, length: float) -> tuple[float, ...]:
    """The local ends of an element's pieces: the roots of a x^2 + b x + c strictly inside, in order, then length.

    The roots as ``_quadratic_roots`` finds them, kept when within (1e-6, 1 - 1e-6) of the length.
    """
    roots = _quadratic_roots(a, b, c)
    lo, hi = 1e-6 * length, length * (1 - 1e-6)
    inside = [root for root in roots if lo < root < hi]
    if not inside:
        return (length,)
    if len(inside) == 2 and inside[1] < inside[0]:
        return (inside[1], inside[0], length)
    return (*inside, length)


def _deflection_samples() -> tuple[tuple[float, float, float, float, float, float], ...]:
    """Hermite shape functions and the unit-UDL bubble term at the sample points, per unit length.

    At xi = x / L the deflection (EI = 1) is N1 v1 + L a2 t1 + N3 v2 + L a4 t2 - w L^4 c, with
    c = xi^2 (1 - xi)^2 / 24, so one table of (xi, N1, a2, N3, a4, c) serves every element.
    """
    out = []
    for s in range(SAMPLES_PER_ELEMENT + 1):
        xi = s / SAMPLES_PER_ELEMENT
        out.append(
            (
                xi,
                1 - 3 * xi**2 + 2 * xi**3,
                xi - 2 * xi**2 + xi**3,
                3 * xi**2 - 2 * xi**3,
                -(xi**2) + xi**3,
                xi * xi * (1 - xi) ** 2 / 24.0,
            )
        )
    return tuple(out)


_SAMPLES = _deflection_samples()


def _element_stiffness(length: float) -> list[list[float]]:
    """Euler-Bernoulli beam element stiffness with EI = 1 (dofs v1, t1, v2, t2)."""
    L = length
    c = 1.0 / L**3
    return [
        [12 * c, 6 * L * c, -12 * c, 6 * L * c],
        [6 * L * c, 4 * L * L * c, -6 * L * c, 2 * L * L * c],
        [-12 * c, -6 * L * c, 12 * c, -6 * L * c],
        [6 * L * c, 2 * L * L * c, -6 * L * c, 4 * L * L * c],
    ]


def _fixed_end_udl(length: float) -> tuple[float, float, float, float]:
    """Equivalent nodal loads of a unit downward UDL (up and counter-clockwise positive)."""
    L = length
    return (-L / 2, -L * L / 12, -L / 2, L * L / 12)


def _quadratic_roots(a: float, b: float, c: float) -> list[float]:
    """Real roots of a x^2 + b x + c = 0 (a may be zero)."""
    if a == 0.0:
        return [] if b == 0.0 else [-c / b]
    disc = b * b - 4 * a * c
    if disc < 0:
        return []
    sq = math.sqrt(disc)
    q = -0.5 * (b + math.copysign(sq, b))
    roots = []
    if q != 0.0:
        roots.append(q / a)
        roots.append(c / q)
    else:
        roots.append(0.0)
    return roots
