"""Domain models for a logged beam (contract 1 input), pydantic v2, frozen, units in field names.

Bad input raises ``pydantic.ValidationError`` (a ``ValueError``) whose text names the field,
the value and what is allowed.
"""

from __future__ import annotations

from enum import StrEnum
from functools import lru_cache
from typing import Annotated, Any

from pydantic import AfterValidator, BaseModel, ConfigDict, Field, field_validator, model_validator

from core import effective_length, tables

MAX_SPAN_MM = 60_000.0
MAX_SPANS = 5


class Record(BaseModel):
    """Shared base: frozen, unknown keys refused."""

    model_config = ConfigDict(frozen=True, extra="forbid")


# -- plausible ranges of logged sizes (bounds against nonsense, not design minimums) ------------------
# Lower bounds: a value below them is a typing error, and a value near zero divides by zero or
# overflows. Common practice: the thinnest framing member is 19 mm (1x lumber), the shallowest 38 mm,
# no beam spans less than 300 mm, no bearing is shorter than 10 mm, an overhang is none or at least
# 10 mm. Shared by the app and `check`.
MIN_WIDTH_MM = 19.0
MIN_DEPTH_MM = 38.0
MIN_SPAN_MM = 300.0
MIN_SPACING_MM = 1.0
MIN_BEARING_MM = 10.0
PositiveMm = Annotated[float, Field(ge=MIN_SPACING_MM, le=MAX_SPAN_MM, allow_inf_nan=False)]
SpanMm = Annotated[float, Field(ge=MIN_SPAN_MM, le=MAX_SPAN_MM, allow_inf_nan=False)]
WidthMm = Annotated[float, Field(ge=MIN_WIDTH_MM, le=1_000, allow_inf_nan=False)]
DepthMm = Annotated[float, Field(ge=MIN_DEPTH_MM, le=2_500, allow_inf_nan=False)]
MIN_OVERHANG_MM = 10.0


def _no_overhang_or_plausible(value: float) -> float:
    if 0 < value < MIN_OVERHANG_MM:
        msg = f"overhang {value:g} mm; allowed: 0 (none) or {MIN_OVERHANG_MM:g} to 20000 mm"
        raise ValueError(msg)
    return value


OverhangMm = Annotated[float, Field(ge=0, le=20_000, allow_inf_nan=False), AfterValidator(_no_overhang_or_plausible)]
BearingLengthMm = Annotated[float, Field(ge=MIN_BEARING_MM, le=2_000, allow_inf_nan=False)]
LineLoadKnM = Annotated[float, Field(ge=0, le=500, allow_inf_nan=False)]


class Material(StrEnum):
    """Member material."""

    glulam = "glulam"
    sawn = "sawn"


class Restraint(StrEnum):
    """Restraint state at a bearing as seen on site."""

    yes = "yes"
    no = "no"
    not_visible = "not_visible"


class TopBracing(StrEnum):
    """What holds the top edge."""

    none = "none"
    purlins = "purlins"
    decking = "decking"


class BottomBracing(StrEnum):
    """What holds the bottom edge."""

    none = "none"
    braces = "braces"


class Service(StrEnum):
    """Service condition (wet: equilibrium moisture above 15 % glulam / 19 % lumber)."""

    dry = "dry"
    wet = "wet"


class Treatment(StrEnum):
    """Preservative treatment."""

    none = "none"
    incised = "incised"


class TopStamp(StrEnum):
    """Orientation of the TOP stamp of an unbalanced glulam layup."""

    up = "up"
    down = "down"
    not_visible = "not_visible"


class Use(StrEnum):
    """What the member supports; picks the deflection limit."""

    floor = "floor"
    roof_plaster = "roof_plaster"
    roof_other = "roof_other"
    roof_no_ceiling = "roof_no_ceiling"


class NegativeLu(StrEnum):
    """How Lu is taken where the bottom edge is in compression (reference o86.md section 13, Q3)."""

    between_restraints = "between_restraints"  # default: distance between real bottom-edge restraints
    zero_moment_point = "zero_moment_point"  # option, flagged: a point of zero moment taken as a brace


class DeadLoadPattern(StrEnum):
    """How 0.9D is applied where dead load counteracts (NBC 4.1.3.2; reference o86.md section 13)."""

    per_part = "per_part"  # default: 0.9D on the parts that relieve, 1.25D on the rest, plus the uniform cases
    uniform = "uniform"  # option, flagged: one dead-load factor on the whole beam


class SystemCase(StrEnum):
    """Load-sharing system for sawn lumber (KH, O86-19 Table 6.12)."""

    single = "single"
    shared = "shared"
    light_frame = "light_frame"
    built_up = "built_up"


# the systems in words, for the trace, the sheet and the notice (CSA O86-19 Table 6.12's cases, from memory)
SYSTEM_WORDS = {
    "single": "single member",
    "shared": "load-sharing system",
    "light_frame": "light-frame system",
    "built_up": "built-up member",
}


def _restraint(value: Any) -> Any:
    if value is True:
        return Restraint.yes
    if value is False:
        return Restraint.no
    return value


class Bearing(Record):
    """One support: restraint against lateral displacement and rotation, and bearing length."""

    lateral: Restraint
    rotation: Restraint
    length_mm: BearingLengthMm

    @field_validator("lateral", "rotation", mode="before")
    @classmethod
    def _bool_to_restraint(cls, value: Any) -> Any:
        return _restraint(value)

    @property
    def restrained(self) -> bool:
        """True when both restraints were seen in place."""
        return self.lateral is Restraint.yes and self.rotation is Restraint.yes


# what a bearing not yet fully entered is checked with (the app's form, an imported draft): valid values that
# let the entries made so far be held to every rule; such a beam is never rechecked until they are entered
BEARING_STAND_INS: dict[str, Any] = {"lateral": "not_visible", "rotation": "not_visible", "length_mm": 140.0}


def bearings_with_stand_ins(bearings: list[Any], count: int) -> list[Any]:
    """``count`` bearings as saved while being entered, each value not yet entered (None or absent) stood in for.

    Anything that is not a bearing's dict is passed on as it is, for the model to refuse.
    """
    padded = list(bearings) + [{}] * (count - len(bearings))
    return [
        {**b, **{k: v for k, v in BEARING_STAND_INS.items() if b.get(k) is None}} if isinstance(b, dict) else b
        for b in padded
    ]


class TopEdge(Record):
    """Bracing of the top edge (purlins at a spacing, or decking) and whether it is fastened."""

    braced_by: TopBracing = TopBracing.none
    spacing_mm: PositiveMm | None = None
    fastened: bool | None = None  # None: not recorded; the recheck assumes not fastened and says so

    @property
    def left_unfastened(self) -> bool:
        """True when purlins or decking were logged as not fastened (the top edge is then unbraced)."""
        return self.braced_by is not TopBracing.none and self.fastened is False

    @property
    def fastened_assumed(self) -> bool:
        """True when fastening was not recorded for purlins or decking (the unfavourable case is taken)."""
        return self.braced_by is not TopBracing.none and self.fastened is None

    @model_validator(mode="after")
    def _spacing_rule(self) -> TopEdge:
        if self.braced_by is TopBracing.purlins and self.spacing_mm is None:
            msg = "top_edge.spacing_mm is required when top_edge.braced_by is 'purlins'"
            raise ValueError(msg)
        return self


class BottomEdge(Record):
    """Bracing of the bottom edge (knee braces, blocking or struts at a spacing)."""

    braced_by: BottomBracing = BottomBracing.none
    spacing_mm: PositiveMm | None = None

    @model_validator(mode="after")
    def _spacing_rule(self) -> BottomEdge:
        if self.braced_by is BottomBracing.braces and self.spacing_mm is None:
            msg = "bottom_edge.spacing_mm is required when bottom_edge.braced_by is 'braces'"
            raise ValueError(msg)
        return self


class Loads(Record):
    """Specified (unfactored) uniform line loads, kN/m (= N/mm), excluding self-weight."""

    dead_kn_m: LineLoadKnM = 0.0
    live_kn_m: LineLoadKnM = 0.0
    snow_kn_m: LineLoadKnM = 0.0


class Specified(Record):
    """The member shown on the design drawings."""

    b_mm: WidthMm
    d_mm: DepthMm
    species: str
    grade: str


def species_allowed(material: Material) -> list[str]:
    """Species names the tables hold for a material."""
    name = "glulam_grades" if material is Material.glulam else "sawn_grades"
    return sorted(set(tables.column(name, "species")))


def grades_allowed(material: Material, species: str) -> list[str]:
    """Grades the tables hold for a material and species."""
    name = "glulam_grades" if material is Material.glulam else "sawn_grades"
    return [r["grade"] for r in tables.load(name).rows if r["species"] == species]


def le_cases_allowed() -> list[str]:
    """``auto`` (each region picks its row) or a row of the effective-length table (O86-19 Table 7.4)."""
    return [effective_length.AUTO, *tables.column("effective_length", "le_case")]


def _grades_by_species(material: Material) -> dict[str, frozenset[str]]:
    """Species -> the grades the tables hold for it (``species_allowed``, ``grades_allowed`` as sets).

    Built once per material and tables generation (a firm's records may change rows): a beam's
    validation then does no table scan.
    """
    return _grade_sets(tables.generation(), material)


@lru_cache(maxsize=16)
def _grade_sets(generation: int, material: Material) -> dict[str, frozenset[str]]:
    del generation  # the cache key only: a firm's correction gives a new generation
    name = "glulam_grades" if material is Material.glulam else "sawn_grades"
    found: dict[str, set[str]] = {}
    for row in tables.load(name).rows:
        found.setdefault(row["species"], set()).add(row["grade"])
    return {species: frozenset(grades) for species, grades in found.items()}


def _le_cases() -> frozenset[str]:
    """``le_cases_allowed`` as a set, built once per tables generation."""
    return _le_case_set(tables.generation())


@lru_cache(maxsize=16)
def _le_case_set(generation: int) -> frozenset[str]:
    del generation  # the cache key only
    return frozenset(le_cases_allowed())


class Beam(Record):
    """One installed beam as logged on site (contract 1)."""

    mark: str = Field(min_length=1, max_length=40)
    material: Material
    species: str
    grade: str
    b_mm: WidthMm
    d_mm: DepthMm
    spans_mm: list[SpanMm] = Field(min_length=1, max_length=MAX_SPANS)
    bearings: list[Bearing]
    top_edge: TopEdge = TopEdge()
    loads: Loads
    overhang_left_mm: OverhangMm = 0.0
    overhang_right_mm: OverhangMm = 0.0
    bottom_edge: BottomEdge = BottomEdge()
    le_case: str = effective_length.AUTO
    service: Service = Service.dry
    treatment: Treatment = Treatment.none
    top_stamp: TopStamp = TopStamp.not_visible
    self_weight: bool = True
    use: Use | None = None  # None: not recorded; the strictest deflection limit is taken and said so
    negative_lu: NegativeLu = NegativeLu.between_restraints
    dead_load_pattern: DeadLoadPattern = DeadLoadPattern.per_part
    specified: Specified | None = None
    # None: not recorded; taken as a single member (KH 1.0, the least factor of Table 6.12: the unfavourable
    # case) and said so
    system: SystemCase | None = None
    bridging_spacing_mm: PositiveMm | None = None
    size_tolerance_mm: float = Field(default=2.0, ge=0, le=25, allow_inf_nan=False)

    @model_validator(mode="after")
    def _cross_field_rules(self) -> Beam:
        _check_species_grade("species", "grade", self.material, self.species, self.grade)
        if self.specified is not None:
            _check_species_grade(
                "specified.species",
                "specified.grade",
                self.material,
                self.specified.species,
                self.specified.grade,
            )
        self._check_bearing_count()
        self._check_edge_spacings()
        self._check_le_case()
        self._check_material_limits()
        total = sum(self.spans_mm) + self.overhang_left_mm + self.overhang_right_mm
        if total > MAX_SPAN_MM * 2:
            msg = f"total length {total:g} mm; allowed: <= {MAX_SPAN_MM * 2:g} mm"
            raise ValueError(msg)
        return self

    def _check_bearing_count(self) -> None:
        supports = len(self.spans_mm) + 1
        if len(self.bearings) != supports:
            msg = (
                f"bearings: {len(self.bearings)} given; {len(self.spans_mm)} span(s) need "
                f"{supports} (one per support, left to right)"
            )
            raise ValueError(msg)

    def _check_edge_spacings(self) -> None:
        longest = max(self.spans_mm)
        for edge in ("top_edge", "bottom_edge"):
            spacing = getattr(self, edge).spacing_mm
            if spacing is not None and spacing > longest:
                msg = (
                    f"{edge}.spacing_mm = {spacing:g} is larger than the longest span {longest:g} mm; "
                    "allowed: 0 < spacing <= longest span"
                )
                raise ValueError(msg)

    def _check_le_case(self) -> None:
        if self.le_case not in _le_cases():
            msg = f"le_case = {self.le_case!r}; allowed: {le_cases_allowed()}"
            raise ValueError(msg)
        kinds = effective_length.beam_kinds(
            len(self.spans_mm),
            self.overhang_left_mm > 0 or self.overhang_right_mm > 0,
            self.top_edge.braced_by is TopBracing.purlins and self.top_edge.fastened is True,
            self.bottom_edge.braced_by is BottomBracing.braces,
        )
        misfit = effective_length.beam_fit_error(self.le_case, kinds)
        if misfit is not None:
            msg = f"le_case = {self.le_case!r} does not fit this beam: {misfit}; allowed: a row that fits, or 'auto'"
            raise ValueError(msg)

    def _check_material_limits(self) -> None:
        if self.material is Material.sawn:
            if self.b_mm > 102:
                msg = (
                    f"b_mm = {self.b_mm:g} for sawn lumber; allowed: 0 < b_mm <= 102 (dimension lumber; "
                    "timbers >= 114 mm thick are not supported: their strengths are not in the tables)"
                )
                raise ValueError(msg)
            if self.d_mm > 400:
                msg = f"d_mm = {self.d_mm:g} for sawn lumber; allowed: 0 < d_mm <= 400"
                raise ValueError(msg)
        if self.material is Material.glulam and self.system not in (None, SystemCase.single):
            msg = "system: glulam beams take KH = 1.0; allowed for glulam: 'single' or not recorded (null)"
            raise ValueError(msg)
        if self.material is Material.glulam and self.treatment is Treatment.incised:
            msg = "treatment = 'incised' applies to sawn lumber; allowed for glulam: 'none'"
            raise ValueError(msg)


def _check_species_grade(f_species: str, f_grade: str, material: Material, species: str, grade: str) -> None:
    grades = _grades_by_species(material).get(species)
    if grades is None:
        msg = f"{f_species} = {species!r} is not a {material.value} species; allowed: {species_allowed(material)}"
        raise ValueError(msg)
    if grade not in grades:
        allowed = grades_allowed(material, species)
        msg = f"{f_grade} = {grade!r} does not exist for {material.value} {species}; allowed: {allowed}"
        raise ValueError(msg)
