"""The words a trace, a sheet and a notice use for the value columns of the standard's tables.

The data files name their columns for code (``fb_pos_mpa``); a contractor, an official or the engineer of
record reads the row a recheck used as the standard prints it: the symbol (fb, fv, fcp, E, E05, KSb ...), what it
applies to where the table has two values of one symbol, and the unit.
"""

from __future__ import annotations

# column: (the standard's symbol, with what it applies to where one symbol has two columns; the unit, "" if none)
COLUMN_WORDS: dict[str, tuple[str, str]] = {
    "fb_pos_mpa": ("fb (positive moment)", "MPa"),
    "fb_neg_mpa": ("fb (negative moment)", "MPa"),
    "fb_mpa": ("fb", "MPa"),
    "fv_mpa": ("fv", "MPa"),
    "fcp_mpa": ("fcp", "MPa"),
    "e_mpa": ("E", "MPa"),
    "e05_mpa": ("E05", "MPa"),
    "ksb": ("KSb", ""),
    "ksv": ("KSv", ""),
    "kscp": ("KScp", ""),
    "kse": ("KSE", ""),
    "kt_strength": ("KT", ""),
    "kt_e": ("KT(E)", ""),
    "unit_weight_kn_m3": ("unit weight", "kN/m3"),
    "factor": ("factor", ""),
    "ratio": ("span / deflection ratio", ""),
}


def column_words(column: str) -> str:
    """'fb (positive moment)' for 'fb_pos_mpa'; a column without words reads as its name with spaces."""
    words = COLUMN_WORDS.get(column)
    return words[0] if words else column.replace("_", " ")


def value_words(column: str, value: str) -> str:
    """'fb (positive moment) 30.6 MPa' for ('fb_pos_mpa', '30.6'): one value of a row, as the standard prints it."""
    words = COLUMN_WORDS.get(column)
    if words is None:
        return f"{column.replace('_', ' ')} {value}"
    symbol, unit = words
    return f"{symbol} {value}" + (f" {unit}" if unit else "")
