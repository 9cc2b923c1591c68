"""Input validation: every impossible beam is refused with the field, the value and the range."""

import pytest
from pydantic import ValidationError

from tests.core.beams import glulam, sawn


@pytest.mark.parametrize(
    "over,field",
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
