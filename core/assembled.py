"""Result models assembled from values the recheck computed itself, without validating them a second time.

A recheck builds about nine result models per simple-span beam (``core.results``); validating each from
keyword arguments cost more than the arithmetic of its check. Every value a check puts in a result is
already of the field's exact type (floats as float, the enums of ``core.kinds`` and ``core.results``,
strings, models built by ``core``), so ``assembled`` stores them as validation would, in the order of the
model's fields. ``tests/core/test_assembled.py`` holds every assembled model of the golden beams to the
model validated from the same values (equal, the same keys in the same order, each value of the same type),
and the golden digests hold the output byte for byte.
"""

from __future__ import annotations

from typing import Any, Final, TypeVar

from pydantic import BaseModel

_M = TypeVar("_M", bound=BaseModel)
_SET: Final = object.__setattr__  # Final: compiled, read once, not looked up in the module per call
_NEW: Final = object.__new__  # what ``cls.__new__`` finds on a result model (none defines its own), without the lookup
# each model class's field names, the set every instance starts from (a copy of a set is cheaper than a new one)
_FIELDS: dict[type[BaseModel], set[str]] = {}


def assembled(cls: type[_M], values: dict[str, Any]) -> _M:
    """A ``cls`` instance holding ``values`` (every field of ``cls``, in its declaration order), not revalidated.

    What validation stores: the values as the fields' ``__dict__``, every field counted as set, no extra
    and no private attributes (the result models declare neither).
    """
    fields = _FIELDS.get(cls)
    if fields is None:
        fields = _FIELDS[cls] = set(cls.model_fields)
    model = _NEW(cls)
    _SET(model, "__dict__", values)
    _SET(model, "__pydantic_fields_set__", fields.copy())  # its own set, as validation gives each model
    _SET(model, "__pydantic_extra__", None)
    _SET(model, "__pydantic_private__", None)
    return model
