"""Result models the recheck assembles without validating (``core.assembled``) are what validation stores.

Machinery, not engineering: for every model of a recheck (the result, each bending region, shear, each
bearing, deflection, each finding), traced and status-only, over golden beams of every kind: the same
fields in declaration order, equal to the model validated from the same values, each value of the very
type validation gives (a float stays a float, an enum member an enum member), and the same JSON.
"""

import pytest
from pydantic import BaseModel

from core.recheck import recheck
from tests.core import golden


def _models(result):
    yield result
    yield from result.bending
    yield result.shear
    yield from result.bearing
    yield result.deflection
    yield from result.findings


def _types(value):
    if isinstance(value, list):
        return [type(value), *(_types(v) for v in value)]
    return type(value)


def _mismatches(model: BaseModel) -> list[str]:
    cls = type(model)
    values = model.__dict__
    out = []
    if list(values) != list(cls.model_fields):
        out.append(f"{cls.__name__}: fields {list(values)}")
    validated = cls.model_validate(values)
    if validated != model or validated.model_dump_json() != model.model_dump_json():
        out.append(f"{cls.__name__}: values differ from the validated model")
    out += [
        f"{cls.__name__}.{name}: {_types(value)} != {_types(validated.__dict__[name])}"
        for name, value in values.items()
        if _types(value) != _types(validated.__dict__[name])
    ]
    return out


def _check(beams):
    bad = []
    for beam in beams:
        try:
            results = [recheck(beam), recheck(beam, traces=False)]
        except ValueError:
            continue  # refused input: no result to hold
        bad += [f"{beam.mark}: {m}" for r in results for model in _models(r) for m in _mismatches(model)]
    return bad


def test_assembled_models_are_the_validated_models():
    assert _check(golden.beams(300)) == []


@pytest.mark.slow
def test_assembled_models_are_the_validated_models_every_golden_beam():
    assert _check(golden.beams(golden.COUNT)) == []
