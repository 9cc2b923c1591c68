"""Whole-or-nothing file writes: a temporary file, fsynced, renamed into place; never a partial file."""

from __future__ import annotations

import os
from pathlib import Path


def write_atomic(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` whole or not at all (a full disk leaves no partial file); fsync file and folder."""
    path = Path(path)
    if not path.parent.is_dir():
        raise FileNotFoundError(2, "the folder does not exist", str(path.parent))
    tmp = path.with_name(path.name + ".part")
    try:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except OSError:
        tmp.unlink(missing_ok=True)
        raise
    fsync_folder(path.parent)
    return path


def fsync_folder(folder: Path) -> None:
    """Make a rename inside ``folder`` durable."""
    fd = os.open(folder, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)
