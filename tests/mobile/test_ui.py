"""The real Kivy app under Xvfb, driven through widget ids.

Open the demo site, change purlin spacing, toggle a restraint off,
see the immediate finding, raise a deficiency, issue a notice, export a bundle; screenshots saved
to test-artefacts/ui for a person to look at.
"""

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


@pytest.mark.ui
@pytest.mark.skipif(shutil.which("xvfb-run") is None, reason="xvfb-run not installed (scripts/setup.sh installs it)")
@pytest.mark.skipif(os.environ.get("BRACEWALK_UI") != "1",
                    reason="opt-in (BRACEWALK_UI=1): the app run under Xvfb hangs intermittently, not yet diagnosed")
def test_app_end_to_end_under_xvfb(tmp_path):
    shots = ROOT / "test-artefacts" / "ui"
    proc = subprocess.run(["xvfb-run", "-a", "-s", "-screen 0 1280x800x24", sys.executable,
                           str(ROOT / "tests" / "mobile" / "ui_drive.py"), str(tmp_path / "ui.db"), str(shots)],
                          capture_output=True, text=True, cwd=ROOT, timeout=120,
                          env={"PATH": "/usr/bin:/bin", "HOME": str(tmp_path), "KIVY_NO_ARGS": "1",
                               "PYTHONPATH": str(ROOT)})
    assert "UI-OK" in proc.stdout, proc.stdout[-3000:] + proc.stderr[-3000:]
    assert len(list(shots.glob("*.png"))) >= 5
    assert (shots / "ui.bwsync").exists()
