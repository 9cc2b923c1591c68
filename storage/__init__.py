"""bracewalk storage: SQLite through sqlite-utils, an append-only op log, and bundle sync."""

from storage.db import StorageError, StoreBusy, StoreUnavailable
from storage.store import Store

__all__ = ["StorageError", "Store", "StoreBusy", "StoreUnavailable"]
