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
import shutil

import pytest

from tests.mobile.test_ui import ROOT, run_app

pytestmark = [
    pytest.mark.ui,
    pytest.mark.skipif(
        shutil.which("xvfb-run") is None, reason="xvfb-run not installed (scripts/setup.sh installs it)"
    ),
]

# window (px), KIVY_DPI, KIVY_METRICS_DENSITY: a 10-inch 1280x800 tablet at density 1.5, the same upright,
# and a 2560x1600 one at density 3 (the review's g1, g3 and g2)
NOTICE_GEOMETRIES = {
    "g1-1280x800-d1.5": ((1280, 800), 149, 1.5),
    "g3-portrait-800x1280-d1.5": ((800, 1280), 149, 1.5),
    "g2-2560x1600-d3": ((2560, 1600), 300, 3.0),
}


@pytest.mark.parametrize("geometry", list(NOTICE_GEOMETRIES))
def test_the_notice_screen_holds_at_the_review_geometries(tmp_path, geometry):
    """No overlap, spill or broken word; 3 items and 3 table rows whole; the page 60 mm tall and full width."""
    size, dpi, density = NOTICE_GEOMETRIES[geometry]
    out = run_app(
        tmp_path / "n.db",
        ROOT / "test-artefacts" / "ui-notice",
        "notice-layout",
        tmp_path / "home",
        size=size,
        dpi=dpi,
        density=density,
        geometry=geometry,
    )
    problems = re.findall(r"^NOTICE-PROBLEM (.*)$", out, flags=re.MULTILINE)
    assert not problems, "\n".join(problems[:30]) + (f"\n... {len(problems)} in all" if len(problems) > 30 else "")
    assert "UI-OK" in out, out[-3000:]
    assert f"WINDOW ({size[0]}, {size[1]})" in out, out[-2000:]  # the window really had that size
