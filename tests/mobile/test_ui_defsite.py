"""The sites, site and deficiency screens at the session-32 review's tablet geometries, at their real dpi and density.

The geometry test in test_ui.py runs the 149 dpi tablet at density 1.0, which hid what the review found at
density 1.5 (and 3 at 300 dpi): a deficiency's location, finding, required action and reference in one-line
fields showing about 20 characters ("Make safe now: snov"), the priority picker cut ("IMMEDIATE: make safe no"),
the portrait header "D-1FED-004 · ...afe now · open"; the site's title losing "Fernvale" (landscape) or the
site's name (portrait: "DEMO · Cedar"); the counts breaking "NOT / PERMITTED"; four whole beam rows at
1280x800. The flow (ui_drive.py "defsite-geometry") looks at the sites screen (its form scrolled to the end),
the demo site (the raise-by-hand form filled with the demo's longest required action; in portrait the folded
deficiencies too) and the demo deficiency with the longest required action, each of its fields scrolled into
view; every shown text whole, nothing overlapping, targets at least 15 mm, and at least ``min_rows`` whole
beam rows in the list.

Screenshots: test-artefacts/ui-defsite/<geometry>-*.png (look at them).
"""

import pytest

from tests.mobile.test_ui import REVIEW_GEOMETRIES, pytestmark, run_at_review_geometry  # noqa: F401 (the ui marker)

# the whole beam rows the demo site must show at each geometry: its list has three headings (the pinned
# IMMEDIATE beams, Canopy, L2)
MIN_ROWS = {"g1-1280x800-149dpi-d1.5": 5, "g2-2560x1600-300dpi-d3": 5, "g3-portrait-800x1280-149dpi-d1.5": 6}


@pytest.mark.parametrize("geometry", list(REVIEW_GEOMETRIES))
def test_sites_site_and_deficiency_show_their_text_whole(tmp_path, geometry):
    """Every text whole (labels, pickers, fields and hints), no overlap, the deficiency's fields whole, beam rows."""
    env = {"BRACEWALK_MIN_ROWS": str(MIN_ROWS[geometry])}
    out = run_at_review_geometry(tmp_path, geometry, "defsite-geometry", "ui-defsite", extra_env=env)
    assert "UI-OK" in out, out[-5000:]
