"""The demo's notice is dated on or after the day each of its items was raised, as the office register shows them.

Common practice: a notice lists deficiencies already raised. The demo issues its notice on its visit day
(2026-11-30); its items must be raised that day or before, whenever the demo is run.
"""

import contextlib
import io
import time

from mobile.demo.run import run_demo
from office import registry
from office.hubstore import HubStore


def test_the_demo_raises_its_items_before_the_notice_that_lists_them(tmp_path):
    with contextlib.redirect_stdout(io.StringIO()):
        assert run_demo(tmp_path / "d") == 0
    hub = HubStore(tmp_path / "d" / "hub.db")
    try:
        items = {i.id: i for i in registry.items(hub, open_only=False)}
        notices = registry.notices(hub)
        assert len(notices) == 1
        notice = notices[0]
        assert notice["issued_at"] == "2026-11-30"
        assert len(notice["deficiency_ids"]) >= 5
        for did in notice["deficiency_ids"]:
            raised = time.strftime("%Y-%m-%d %H:%M", time.gmtime(items[did].raised_ms / 1000))
            # the visit's morning, Pacific time: after the 09:15 visit began, before the 09:45 acknowledgement
            assert "2026-11-30 17:15" <= raised <= "2026-11-30 17:45", (items[did].number, raised)
    finally:
        hub.close()
