"""Compiled or source: `core` runs its compiled modules only while they were built from the sources as they are.

``scripts/build_core.py`` compiles the recheck's hot modules with mypyc and records the SHA-256 of each source
in ``core/compiled.json``. Python would load a compiled module before its ``.py`` even after the ``.py``
was edited, and compiled modules call each other directly, so one stale module could run old arithmetic
unseen. ``use_source_if_needed`` (called first thing by ``core/__init__.py``) therefore loads every ``core``
module from its source when any source changed since the build, when a compiled file is not from the
last build, or when ``BRACEWALK_CORE_SOURCE`` is set (CI runs core's tests both ways); never a mix.
Reading the package's own files here is, with the data tables, the only I/O in ``core``.
"""

from __future__ import annotations

import hashlib
import json
import os
import sys
from collections.abc import Sequence
from importlib.abc import MetaPathFinder
from importlib.machinery import SOURCE_SUFFIXES, FileFinder, ModuleSpec, SourceFileLoader
from pathlib import Path
from types import ModuleType

PACKAGE = Path(__file__).resolve().parent
MANIFEST = PACKAGE / "compiled.json"
SOURCE_ONLY_ENV = "BRACEWALK_CORE_SOURCE"


def stale_reason() -> str:
    """Why the compiled modules may not run ('' when there are none, or they match their sources)."""
    found = sorted(PACKAGE.rglob("*.so"))
    if not found:
        return ""
    if not MANIFEST.is_file():
        return f"{MANIFEST.name} is missing"
    manifest = json.loads(MANIFEST.read_text(encoding="utf-8"))
    for rel, sha in manifest["sources"].items():
        path = PACKAGE.parent / rel
        if not path.is_file() or hashlib.sha256(path.read_bytes()).hexdigest() != sha:
            return f"{rel} changed since it was compiled"
    listed = set(manifest["compiled"])
    for path in found:
        if str(path.relative_to(PACKAGE.parent)) not in listed:
            return f"{path.name} is not from the last build"
    return ""


class SourceFirst(MetaPathFinder):
    """Find every ``core`` module (and package) by its ``.py`` only, never a compiled file."""

    def find_spec(
        self, fullname: str, path: Sequence[str] | None, target: ModuleType | None = None
    ) -> ModuleSpec | None:
        """The source spec of a ``core.*`` module; None for anything else (the usual finders take it)."""
        if not fullname.startswith("core."):
            return None
        for entry in path or ():
            spec = FileFinder(entry, (SourceFileLoader, SOURCE_SUFFIXES)).find_spec(fullname, target)
            if spec is not None:
                return spec
        return None


def use_source_if_needed() -> str:
    """Load core from source when asked or when the compiled modules are stale; the reason ('' if compiled)."""
    why = f"{SOURCE_ONLY_ENV} is set" if os.environ.get(SOURCE_ONLY_ENV) else stale_reason()
    if why and not any(isinstance(f, SourceFirst) for f in sys.meta_path):
        sys.meta_path.insert(0, SourceFirst())
        if not os.environ.get(SOURCE_ONLY_ENV):
            sys.stderr.write(f"bracewalk: core runs from source (slower): {why}; rebuild with scripts/build_core.py\n")
    return why


def running_compiled() -> bool:
    """True when the recheck's modules in use are the compiled ones."""
    from core import analysis

    return not str(analysis.__file__).endswith(".py")


__all__ = ["SourceFirst", "running_compiled", "stale_reason", "use_source_if_needed"]
