"""The beam screen at the session-32 review's tablet geometries, at their real dpi and density.

The geometry test in test_ui.py runs the 149 dpi tablet at density 1.0, which hid what the review found at
density 1.5: the bending line of a not-established beam cut by its row, a portrait banner flipping the form
and the panel side by side (Mark 16 mm wide), a landscape banner leaving the form one field of height,
a new beam opened on the previous one's panel scroll, restraint buttons breaking words ('No restrai / nt'),
raised-finding numbers light grey on grey. The flow (ui_drive.py "beam-geometry") opens RB-1 (passes),
RB-3 (deficient, IMMEDIATE) and RB-5 (not established), each after scrolling the one before to the end of
its panel, and holds every view to ``layout_problems`` and ``beam_problems``.

Screenshots: test-artefacts/ui-beam/<geometry>-*.png (look at them).
"""

import pytest

from tests.mobile.test_ui import ROOT, pytestmark, run_app  # noqa: F401 (pytestmark: the ui marker, xvfb-run)

# (width, height) px, the tablet's real dpi, and the density Kivy runs it at (the review's g1, g2, g3)
BEAM_GEOMETRIES = {
    "g1-1280x800-149dpi-d1.5": ((1280, 800), 149, 1.5),
    "g2-2560x1600-300dpi-d3": ((2560, 1600), 300, 3.0),
    "g3-portrait-800x1280-149dpi-d1.5": ((800, 1280), 149, 1.5),
}


@pytest.mark.parametrize("geometry", list(BEAM_GEOMETRIES))
def test_the_beam_screen_holds_at_the_review_geometries(tmp_path, geometry):
    """Passing, deficient with its IMMEDIATE banner, not established: nothing cut, crowded or unreadable."""
    size, dpi, density = BEAM_GEOMETRIES[geometry]
    out = run_app(
        tmp_path / "b.db",
        ROOT / "test-artefacts" / "ui-beam",
        "beam-geometry",
        tmp_path / "home",
        size=size,
        dpi=dpi,
        density=density,
        geometry=geometry,
    )
    assert "UI-OK" in out, out[-5000:]
    assert f"WINDOW ({size[0]}, {size[1]})" in out, out[-2000:]  # the window really had that size
