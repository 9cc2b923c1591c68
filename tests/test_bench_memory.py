"""The bench's memory figures are each child's own, even when the process that starts it is large.

Linux keeps ``getrusage(RUSAGE_SELF).ru_maxrss`` across fork and execve (getrusage(2): the maximum
resident set size is inherited through fork, and preserved across execve), so a child of a 600 MB
process would report 600 MB whatever it used. VmHWM in /proc/self/status is the peak of the
process's own address space, which execve replaces (proc(5)). The first test shows the trap on this
machine (so the second one means something); the second starts a real bench probe from a large parent.
"""

import json
import subprocess
import sys
from pathlib import Path

import pytest

from bench.common import own_peak_mb

ROOT = Path(__file__).resolve().parents[1]
PARENT_MB = 600

# A parent that holds PARENT_MB of touched memory, then runs CHILD in a child process and prints its output.
PARENT = f"""
import subprocess, sys
big = bytearray({PARENT_MB} * 1024 * 1024)
for i in range(0, len(big), 4096):
    big[i] = 1
child = sys.argv[1]
out = subprocess.run([sys.executable, "-c", child], check=True, capture_output=True, text=True, cwd=sys.argv[2])
print(out.stdout.strip().splitlines()[-1])
"""


def _in_large_parent(child: str) -> str:
    out = subprocess.run(
        [sys.executable, "-c", PARENT, child, str(ROOT)], check=True, capture_output=True, text=True, timeout=300
    )
    return out.stdout.strip()


def test_ru_maxrss_of_a_child_reports_its_large_parents_peak_and_vmhwm_does_not():
    child = (
        "import resource\n"
        "from bench.common import own_peak_mb\n"
        "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, own_peak_mb())\n"
    )
    inherited, own = map(float, _in_large_parent(child).split())
    assert inherited >= PARENT_MB  # the trap (getrusage(2)): the parent's peak, not the child's
    assert own < 150  # a bare interpreter with the bench's common module: tens of MB


def test_a_bench_probe_started_by_a_large_parent_reports_its_own_peak(tmp_path):
    db = tmp_path / "site.db"
    child = f"from bench.siteopen import probe\nimport json\nprint(json.dumps(probe('build', {str(db)!r}, '20')))\n"
    got = json.loads(_in_large_parent(child))
    assert 20 < got["peak_mb"] < 300  # a 20-beam site written through the storage API, not the parent's 600 MB


def test_own_peak_reads_vmhwm_in_kib(tmp_path):
    status = tmp_path / "status"
    status.write_text("Name:\tpython\nVmPeak:\t  900000 kB\nVmHWM:\t   51200 kB\nVmRSS:\t   40000 kB\n")
    assert own_peak_mb(status) == 50.0  # 51,200 KiB = 50 MiB (proc(5): the kB of /proc are KiB)
    status.write_text("Name:\tpython\n")
    with pytest.raises(RuntimeError, match="no VmHWM line"):
        own_peak_mb(status)
    with pytest.raises(RuntimeError, match=r"needs .*missing"):
        own_peak_mb(tmp_path / "missing")
