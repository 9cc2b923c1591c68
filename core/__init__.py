"""bracewalk core: pure CSA O86 recheck engine and domain models.

No I/O beyond reading the package's own read-only data tables (and, at import, its own sources against
the compiled build's manifest: ``core.compiled``), no UI, no SQL.
Units inside: N, mm, MPa (N/mm2), N*mm.
"""

from core.compiled import use_source_if_needed

use_source_if_needed()  # before any other core module loads: compiled only while built from these sources

from core.models import Beam  # noqa: E402
from core.recheck import recheck  # noqa: E402
from core.results import Recheck  # noqa: E402

__all__ = ["Beam", "Recheck", "recheck"]
