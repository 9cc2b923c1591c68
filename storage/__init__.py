"""bracewalk storage: SQLite through sqlite-utils, an append-only op log, and bundle sync."""

from storage.store import Store

__all__ = ["Store"]
