"""The check that governs a recheck (``core.results.governing_check``), compiled with the recheck's modules."""

from __future__ import annotations

from core.kinds import Outcome
from core.results import BearingCheck, BendingRegion, DeflectionCheck, ShearCheck


def governing(
    bending: list[BendingRegion], shear: ShearCheck, bearing: list[BearingCheck], deflection: DeflectionCheck
) -> tuple[int, float | None]:
    """The check that governs: its index in [bending regions..., shear, bearings..., deflection], utilisation.

    A bending region whose capacity is not established or not permitted has no utilisation and governs over
    every rated check (the first not established, else the first not permitted, as the status ranks them),
    with None. Otherwise the largest utilisation governs, the last of equals (the right-hand bearing of a
    symmetric beam). One pass in order: a later utilisation replaces the held one when not smaller.
    """
    not_permitted = -1
    best_i, best_u = -1, 0.0
    i = 0
    for r in bending:
        u = r.utilisation
        if u is None:
            if r.outcome is Outcome.not_established:
                return i, None  # the first not established: nothing ranks above it
            if r.outcome is Outcome.not_permitted and not_permitted < 0:
                not_permitted = i
        elif best_i < 0 or u >= best_u:
            best_i, best_u = i, u
        i += 1
    if not_permitted >= 0:
        return not_permitted, None
    rated = [shear.utilisation, *(b.utilisation for b in bearing), deflection.utilisation]
    for u in rated:
        if best_i < 0 or u >= best_u:
            best_i, best_u = i, u
        i += 1
    return best_i, best_u
