"""Input validation: every impossible beam is refused with the field, the value and the range."""

import pytest
from pydantic import ValidationError

from tests.core.beams import glulam, sawn


@pytest.mark.parametrize(
    ("over", "field"),
    [
        ({"b_mm": 0}, "b_mm"),
        ({"b_mm": -130}, "b_mm"),
        ({"d_mm": float("nan")}, "d_mm"),
        ({"spans_mm": [60_001]}, "spans_mm"),
        ({"spans_mm": []}, "spans_mm"),
        ({"spans_mm": [7200, 7200]}, "bearings"),
        ({"grade": "30f-E"}, "grade"),
        ({"species": "Spruce-Pine"}, "grade"),  # 24f-E does not exist for Spruce-Pine (memory)
        ({"species": "Oak"}, "species"),
        ({"top_edge": {"braced_by": "purlins", "spacing_mm": 8000}}, "top_edge.spacing_mm"),
        ({"top_edge": {"braced_by": "purlins"}}, "top_edge.spacing_mm"),
        ({"le_case": "magic"}, "le_case"),
        ({"loads": {"dead_kn_m": -1}}, "dead_kn_m"),
        ({"overhang_left_mm": -5}, "overhang_left_mm"),
        ({"colour": "red"}, "colour"),
    ],
)
def test_invalid_glulam_names_the_field(over, field):
    with pytest.raises(ValueError, match=field.replace(".", r"\.")):
        glulam(**over)


def test_validation_error_is_a_value_error():
    with pytest.raises(ValidationError):
        glulam(b_mm=0)


def test_sawn_timbers_are_out_of_scope():
    with pytest.raises(ValueError, match=r"b_mm = 140 .*timbers"):
        sawn(b_mm=140)


def test_booleans_and_not_visible_accepted_for_restraint():
    beam = glulam(
        bearings=[
            {"lateral": True, "rotation": "not_visible", "length_mm": 140},
            {"lateral": False, "rotation": True, "length_mm": 140},
        ]
    )
    assert beam.bearings[0].rotation.value == "not_visible"
    assert beam.bearings[1].lateral.value == "no"


def test_beam_is_frozen():
    beam = glulam()
    with pytest.raises(ValidationError):
        beam.b_mm = 10


def test_schema_names_the_unfavourable_defaults_and_the_flagged_options():
    from core.models import Beam

    schema = Beam.model_json_schema()
    props = schema["properties"]
    assert props["top_stamp"]["default"] == "not_visible"
    assert props["use"]["default"] is None
    assert props["negative_lu"]["default"] == "between_restraints"
    assert props["dead_load_pattern"]["default"] == "per_part"
    assert props["le_case"]["default"] == "auto"
    assert schema["$defs"]["TopEdge"]["properties"]["fastened"]["default"] is None


def test_readme_contract_defaults_name_real_fields():
    from pathlib import Path

    from core.models import Beam

    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text()
    block = readme.split("<!-- contract1:start -->")[1].split("<!-- contract1:end -->")[0]
    fields = [line.split("`")[1] for line in block.splitlines() if line.startswith("| `")]
    schema = Beam.model_json_schema()
    assert fields
    for path in fields:
        head, _, tail = path.partition(".")
        props = schema["properties"] if not tail else schema["$defs"]["TopEdge"]["properties"]
        assert (tail or head) in props, path


def test_incised_glulam_is_refused_by_the_model_naming_the_field():
    import pytest
    from pydantic import ValidationError

    from tests.core.beams import glulam

    # O86-19 Table 6.11 (memory): the incising factor KT applies to sawn lumber only
    with pytest.raises(
        ValidationError, match=r"treatment = 'incised' applies to sawn lumber; allowed for glulam: 'none'"
    ):
        glulam(treatment="incised")


@pytest.mark.parametrize(
    ("b_mm", "refused"),
    # dimension lumber is at most 102 mm thick (nominal 4 in, dressed 89 mm; O86-19 Table 6.13's 89-102 mm
    # column, reference o86.md section 2.1); timbers >= 114 mm are out of scope
    [(102, False), (103, True), (114, True)],
)
def test_sawn_thickness_boundary_is_102_mm(b_mm, refused):
    if refused:
        with pytest.raises(ValueError, match=rf"b_mm = {b_mm} for sawn lumber; allowed: 0 < b_mm <= 102"):
            sawn(b_mm=b_mm)
    else:
        assert sawn(b_mm=b_mm).b_mm == b_mm


@pytest.mark.parametrize("side", ["overhang_left_mm", "overhang_right_mm"])
@pytest.mark.parametrize("value", [0.5, 5, 9.99])
def test_a_sliver_of_overhang_is_refused_with_the_allowed_range(side, value):
    # an overhang under 10 mm is a data-entry slip, not a cantilever (the model's own plausibility rule)
    with pytest.raises(ValueError, match=rf"overhang {value:g} mm; allowed: 0 \(none\) or 10 to 20000 mm"):
        glulam(**{side: value})
