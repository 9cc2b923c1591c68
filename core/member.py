"""Material and section properties of a logged member, looked up from the tables with their trace."""

from __future__ import annotations

from dataclasses import dataclass

from core import tables
from core.clauses.bending import section_modulus_s
from core.clauses.factors import system_factor_kh
from core.columns import column_words, value_words
from core.kinds import TraceStatus
from core.models import SYSTEM_WORDS, Beam, Material, Service, SystemCase, Treatment
from core.results import FactorTrace, RowUsed, trace_rows

GLULAM_E05_RATIO = 0.87


@dataclass(frozen=True)
class Member:
    """Specified strengths (MPa), modification factors and section properties (mm)."""

    fb_pos_mpa: float
    fb_neg_mpa: float
    balanced: bool
    fv_mpa: float
    fcp_mpa: float
    e_mpa: float
    e05_mpa: float
    ksb: float
    ksv: float
    kscp: float
    kse: float
    kt: float
    kt_e: float
    kh: float
    kzb: float | None
    s_mm3: float
    area_mm2: float
    inertia_mm4: float
    self_weight_n_mm: float
    trace: tuple[FactorTrace, ...]
    grade_status: TraceStatus = TraceStatus.memory  # status of the grade row the strengths came from
    rows_used: frozenset[RowUsed] = frozenset()  # the table rows of ``trace`` (``core.results.trace_rows``)


def _grade_row(beam: Beam) -> tuple[dict[str, str], str]:
    if beam.material is Material.glulam:
        return tables.find("glulam_grades", species=beam.species, grade=beam.grade), "glulam_grades"
    return tables.find("sawn_grades", species=beam.species, grade=beam.grade), "sawn_grades"


# the service factor tables' size rules and the treatment names, in words
_SIZE_RULE_WORDS = {
    "any": "any size",
    "le_89": "smaller dimension 89 mm or less",
    "gt_89": "smaller dimension over 89 mm",
}
_TREATMENT_WORDS = {"none": "untreated", "incised": "incised"}


def service_factors(beam: Beam) -> tuple[dict[str, float], FactorTrace]:
    """KSb, KSv, KScp, KSE for the service condition (1.0 dry; wet per O86-19 Tables 6.10 / 7.2)."""
    if beam.service is Service.dry:
        ones = {"ksb": 1.0, "ksv": 1.0, "kscp": 1.0, "kse": 1.0}
        return ones, FactorTrace(
            symbol="KS",
            value=1.0,
            clause="CSA O86-19 5.4.2 / 6.4.2 / 7.4.2",
            source="dry service: all KS = 1.0",
            status=TraceStatus.memory,
        )
    if beam.material is Material.glulam:
        rule, table = "any", "Table 7.2"
    else:
        rule, table = ("le_89" if min(beam.b_mm, beam.d_mm) <= 89 else "gt_89"), "Table 6.10"
    row = tables.find("service_factors", material=beam.material.value, smaller_dim_rule=rule)
    values = {k: float(row[k]) for k in ("ksb", "ksv", "kscp", "kse")}
    text = ", ".join(f"{column_words(k)} {v:g}" for k, v in values.items())
    return values, FactorTrace(
        symbol="KS (wet)",
        value=values["ksb"],
        clause=f"CSA O86-19 {table}",
        source=f"row {beam.material.value}, wet service, {_SIZE_RULE_WORDS[rule]}: {text}",
        status=TraceStatus(row["status"]),
    )


def treatment_factors(beam: Beam) -> tuple[float, float, FactorTrace]:
    """KT for strength and for E (O86-19 6.4.3, memory)."""
    if beam.material is Material.glulam and beam.treatment is Treatment.incised:
        msg = "treatment = 'incised' applies to sawn lumber; allowed for glulam: 'none'"
        raise ValueError(msg)
    row = tables.find(
        "treatment_factors", material=beam.material.value, treatment=beam.treatment.value, service=beam.service.value
    )
    kt, kt_e = float(row["kt_strength"]), float(row["kt_e"])
    return (
        kt,
        kt_e,
        FactorTrace(
            symbol="KT",
            value=kt,
            clause="CSA O86-19 6.4.3 / Table 6.11",
            source=(
                f"row {beam.material.value}, {_TREATMENT_WORDS[beam.treatment.value]}, {beam.service.value} service: "
                f"KT {kt:g}, KT(E) {kt_e:g}"
            ),
            status=TraceStatus(row["status"]),
        ),
    )


# the Table 6.13 columns in the words of the table's heads (the smaller dimension of the section)
_KZB_COLUMN_WORDS = {"kzb_small_38_64": "38-64 mm", "kzb_mid_89_102": "89-102 mm", "kzb_large_114_up": ">= 114 mm"}


def size_factor_kzb(b_mm: float, d_mm: float) -> tuple[float, FactorTrace]:
    """CSA O86-19 Table 6.13 (memory): KZb (= KZv) for sawn lumber from the measured section."""
    small, large = min(b_mm, d_mm), max(b_mm, d_mm)
    # a measured thickness between the columns (over 64, under 89 mm) takes the 38-64 column: its factors are
    # the lower ones in every row, the unfavourable reading of a size the table does not list
    column = "kzb_small_38_64" if small < 88.5 else ("kzb_mid_89_102" if small <= 102 else "kzb_large_114_up")
    for row in tables.load("kzb").rows:
        if large <= float(row["larger_dim_max_mm"]):
            value = float(row[column])
            return value, FactorTrace(
                symbol="KZb",
                value=value,
                clause="CSA O86-19 Table 6.13",
                source=(
                    f"row larger dimension up to {row['larger_dim_max_mm']} mm, thickness "
                    f"{_KZB_COLUMN_WORDS[column]}: KZb {value:g}"
                ),
                status=TraceStatus(row["status"]),
            )
    msg = f"d_mm = {large:g} is outside the KZb table"
    raise ValueError(msg)


_MEMBERS: dict[tuple[object, ...], Member] = {}
_MEMBERS_MAX = 4096


def member_properties(beam: Beam) -> Member:
    """Look up strengths and factors for a beam and compute its section properties.

    Cached per the fields it reads and the tables' generation (a firm's correction starts afresh).
    """
    key = (
        tables.generation(),
        beam.material,
        beam.species,
        beam.grade,
        beam.b_mm,
        beam.d_mm,
        beam.service,
        beam.treatment,
        beam.system,
        beam.self_weight,
    )
    hit = _MEMBERS.get(key)
    if hit is None:
        if len(_MEMBERS) >= _MEMBERS_MAX:
            _MEMBERS.clear()
        hit = _MEMBERS[key] = _member_properties(beam)
    return hit


# the columns of a grade row that name it or say where it comes from (the rest are its values)
_GRADE_NAMING = ("species", "grade", "balanced", "status", "confirmed_by")


def _grade_words(row: dict[str, str]) -> str:
    """A grade row as the standard prints it, for the trace and the notice's list of rows used.

    'row D.Fir-L 24f-E, unbalanced layup: fb (positive moment) 30.6 MPa, fb (negative moment) 23.0 MPa, fv 2.0 MPa,
    fcp 7.0 MPa, E 12800 MPa', then where a confirmed row was confirmed, or the firm's own record of the row.
    """
    layup = {"yes": ", balanced layup", "no": ", unbalanced layup"}.get(row.get("balanced", ""), "")
    values = ", ".join(value_words(k, v) for k, v in row.items() if k not in _GRADE_NAMING and v != "")
    words = f"row {row['species']} {row['grade']}{layup}: {values}"
    provenance = row.get("confirmed_by", "")
    if not provenance:
        return words
    # a firm's record (core.overrides.note) says itself what it is: "verified by ...", "fv corrected to ..."
    return f"{words}; " + (f"confirmed by {provenance}" if row["status"] == "confirmed" else provenance)


def _member_properties(beam: Beam) -> Member:
    row, table = _grade_row(beam)
    trace = [
        FactorTrace(
            symbol="grade",
            value=f"{beam.species} {beam.grade}",
            clause="CSA O86-19 Table 7.3" if table == "glulam_grades" else "CSA O86-19 Table 6.4",
            source=_grade_words(row),
            status=TraceStatus(row["status"]),
        )
    ]
    ks, ks_trace = service_factors(beam)
    kt, kt_e, kt_trace = treatment_factors(beam)
    trace += [ks_trace, kt_trace]
    if beam.material is Material.glulam:
        fb_pos, fb_neg = float(row["fb_pos_mpa"]), float(row["fb_neg_mpa"])
        balanced = row["balanced"] == "yes"
        e = float(row["e_mpa"])
        e05 = GLULAM_E05_RATIO * e
        kh, kzb = 1.0, None
        trace.append(
            FactorTrace(
                symbol="KH",
                value=1.0,
                clause="CSA O86-19 7.4",
                source="glulam: no system factor",
                status=TraceStatus.memory,
            )
        )
    else:
        fb_pos = fb_neg = float(row["fb_mpa"])
        balanced = True
        e, e05 = float(row["e_mpa"]), float(row["e05_mpa"])
        kh = system_factor_kh((beam.system or SystemCase.single).value)
        kzb, kzb_trace = size_factor_kzb(beam.b_mm, beam.d_mm)
        trace.append(
            FactorTrace(
                symbol="KH",
                value=kh,
                clause="CSA O86-19 Table 6.12",
                source=(
                    f"system recorded: {SYSTEM_WORDS[beam.system.value]}, KH {kh:g}"
                    if beam.system is not None
                    else f"system not recorded: taken as a single member (the unfavourable case), KH {kh:g}"
                ),
                status=TraceStatus.memory,
            )
        )
        trace.append(kzb_trace)
    density = tables.find("densities", material=beam.material.value, species=beam.species)
    gamma = float(density["unit_weight_kn_m3"])
    sw = gamma * beam.b_mm * beam.d_mm * 1e-6 if beam.self_weight else 0.0
    trace.append(
        FactorTrace(
            symbol="self-weight",
            value=sw,
            unit="kN/m",
            source=(
                f"unit weight of {beam.material.value} {beam.species}: {gamma:g} kN/m3 x b x d (common practice)"
                if beam.self_weight
                else "switched off by the reviewer"
            ),
            status=TraceStatus(density["status"]) if beam.self_weight else TraceStatus.input,
        )
    )
    return Member(
        fb_pos_mpa=fb_pos,
        fb_neg_mpa=fb_neg,
        balanced=balanced,
        fv_mpa=float(row["fv_mpa"]),
        fcp_mpa=float(row["fcp_mpa"]),
        e_mpa=e,
        e05_mpa=e05,
        ksb=ks["ksb"],
        ksv=ks["ksv"],
        kscp=ks["kscp"],
        kse=ks["kse"],
        kt=kt,
        kt_e=kt_e,
        kh=kh,
        kzb=kzb,
        s_mm3=section_modulus_s(beam.b_mm, beam.d_mm),
        area_mm2=beam.b_mm * beam.d_mm,
        inertia_mm4=beam.b_mm * beam.d_mm**3 / 12.0,
        self_weight_n_mm=sw,
        trace=tuple(trace),
        grade_status=TraceStatus(row["status"]),
        rows_used=frozenset(trace_rows(trace)),
    )
