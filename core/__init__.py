"""bracewalk core: pure CSA O86 recheck engine and domain models.

No I/O beyond reading the package's own read-only data tables, no UI, no SQL.
Units inside: N, mm, MPa (N/mm2), N*mm.
"""

from core.models import Beam
from core.recheck import recheck
from core.results import Recheck

__all__ = ["Beam", "Recheck", "recheck"]
