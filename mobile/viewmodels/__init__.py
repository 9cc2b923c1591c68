"""Plain-Python view models for the tablet screens (no Kivy): all screen logic lives here and is tested.

Each screen of ``mobile/app.py`` is a thin shell over one of these. They read and write only
through the ``storage`` API, ``core`` and ``reports``.
"""

from mobile.viewmodels.beam import BeamFormViewModel
from mobile.viewmodels.common import STATUS_WORDS, status_label
from mobile.viewmodels.deficiency import DeficiencyViewModel
from mobile.viewmodels.notice import NoticeViewModel
from mobile.viewmodels.site import SiteViewModel
from mobile.viewmodels.sites import SitesViewModel
from mobile.viewmodels.sync import SyncViewModel

__all__ = [
    "STATUS_WORDS",
    "BeamFormViewModel",
    "DeficiencyViewModel",
    "NoticeViewModel",
    "SiteViewModel",
    "SitesViewModel",
    "SyncViewModel",
    "status_label",
]
