"""Clause functions of CSA O86-19: one small pure function per quantity, floats in and out.

Every function's first docstring line cites the standard, edition and clause; arguments and the
return value state their units. Members checks live above, in ``core.recheck``.
"""
