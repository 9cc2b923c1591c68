"""The beam screen at the session-32 and session-34 reviews' tablet geometries, at their real dpi and density.

The geometry test in test_ui.py runs the 149 dpi tablet at density 1.0, which hid what the review found at
density 1.5: the bending line of a not-established beam cut by its row, a portrait banner flipping the form
and the panel side by side (Mark 16 mm wide), a landscape banner leaving the form one field of height,
a new beam opened on the previous one's panel scroll, restraint buttons breaking words ('No restrai / nt'),
raised-finding numbers light grey on grey. The session-34 review found the IMMEDIATE banner opened with several
findings pushing the top bar and its first finding off the window. The flow (ui_drive.py "beam-geometry") opens
RB-1 (passes), RB-3 (deficient, IMMEDIATE; then with five IMMEDIATE findings, the banner opened: the top bar and
its first finding in view, at most half the window high, its last line reached by scrolling), RB-5 (not
established) and the sawn joist FJ-1 (its lengths typed in inches, six digits as shown: "234.95 mm" was drawn
"5 mm" in landscape; its tributary width 16" on the keypad, then a bare 400 and its question; its system picker,
"not recorded (taken as single member)", each choice whole, load-sharing picked and shown again when the beam is
opened again; then two spans, a long note and four spans, each drawn whole, and the keypad over the four spans:
every key at least 15 mm both ways, no label cut, the entry whole), each after scrolling the one before to the end
of its panel, and holds every view to ``layout_problems`` and ``beam_problems`` (every typed value drawn whole, the
caution saying that what was not seen or not recorded is taken as the unfavourable case).

Screenshots: test-artefacts/ui-beam/<geometry>-*.png (look at them).
"""

import pytest

from tests.mobile.test_ui import REVIEW_GEOMETRIES, pytestmark, run_at_review_geometry  # noqa: F401 (the ui marker)


@pytest.mark.parametrize("geometry", list(REVIEW_GEOMETRIES))
def test_the_beam_screen_holds_at_the_review_geometries(tmp_path, geometry):
    """Passing, deficient with its IMMEDIATE banner, not established: nothing cut, crowded or unreadable."""
    out = run_at_review_geometry(tmp_path, geometry, "beam-geometry", "ui-beam")
    assert "UI-OK" in out, out[-5000:]
