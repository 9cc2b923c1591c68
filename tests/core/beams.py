"""Beam builders shared by the core tests (invented demo-style inputs, not check values)."""

from core.models import Beam


def glulam(**over):
    data = {
        "mark": "T-1",
        "material": "glulam",
        "species": "D.Fir-L",
        "grade": "24f-E",
        "b_mm": 130,
        "d_mm": 456,
        "spans_mm": [7200],
        "bearings": [{"lateral": True, "rotation": True, "length_mm": 140}] * 2,
        "top_edge": {"braced_by": "purlins", "spacing_mm": 2400, "fastened": True},
        "loads": {"dead_kn_m": 2.0, "live_kn_m": 0.0, "snow_kn_m": 5.0},
        "top_stamp": "up",
        "use": "roof_no_ceiling",
    }
    data.update(over)
    return Beam.model_validate(data)


def sawn(**over):
    data = {
        "mark": "J-1",
        "material": "sawn",
        "species": "S-P-F",
        "grade": "No.1/No.2",
        "b_mm": 38,
        "d_mm": 235,
        "spans_mm": [3600],
        "bearings": [{"lateral": True, "rotation": True, "length_mm": 89}] * 2,
        "top_edge": {"braced_by": "decking", "fastened": True},
        "loads": {"dead_kn_m": 0.25, "live_kn_m": 0.8, "snow_kn_m": 0.0},
        "use": "floor",
    }
    data.update(over)
    return Beam.model_validate(data)
