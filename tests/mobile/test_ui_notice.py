"""The notice screen at the session-32 review's tablet geometries, at their real dpi and density (Xvfb).

The review found, at 800x1280 portrait, the page-turning row lying over "Acknowledge" and "Issue" and the
"Issued" message hidden under it; at every geometry one clipped item of the 9 to issue, one clipped line of
the 54 table rows the reviewer is asked to check, a page preview about 8 mm tall, and button words broken
in the middle ("Acknowle|dge"). The flow ("notice-layout" in ui_drive.py) walks the screen fresh, the
preview, the page opened full size, a refused issue and an issued notice, at the page's top, middle and
bottom; it prints each problem as a NOTICE-PROBLEM line and fails on any.

Screenshots: test-artefacts/ui-notice/<geometry>-n*.png (look at them after a change to the screen).
"""

import re

import pytest

from tests.mobile.test_ui import REVIEW_GEOMETRIES, pytestmark, run_at_review_geometry  # noqa: F401 (the ui marker)


@pytest.mark.parametrize("geometry", list(REVIEW_GEOMETRIES))
def test_the_notice_screen_holds_at_the_review_geometries(tmp_path, geometry):
    """No overlap, spill or broken word; 3 items and 3 table rows whole; the page 60 mm tall and full width."""
    out = run_at_review_geometry(tmp_path, geometry, "notice-layout", "ui-notice")
    problems = re.findall(r"^NOTICE-PROBLEM (.*)$", out, flags=re.MULTILINE)
    assert not problems, "\n".join(problems[:30]) + (f"\n... {len(problems)} in all" if len(problems) > 30 else "")
    assert "UI-OK" in out, out[-3000:]
