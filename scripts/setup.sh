#!/usr/bin/env bash
# Set up bracewalk on a fresh Debian machine: system packages (as root, via apt-get), a virtual
# environment in .venv, and the project with its test extra. Safe to run twice.
set -euo pipefail
cd "$(dirname "$0")/.."
export DEBIAN_FRONTEND=noninteractive
if command -v apt-get >/dev/null 2>&1 && [ "$(id -u)" = "0" ]; then
  apt-get update -qq
  apt-get install -y -qq --no-install-recommends \
    xvfb xauth libgl1 libgl1-mesa-dri libegl1 libmtdev1 libsdl2-2.0-0 poppler-utils postgresql \
    build-essential python3-dev chromium chromium-driver fonts-noto-core fonts-noto-color-emoji fonts-droid-fallback fonts-nanum >/dev/null
fi
VENV="${BRACEWALK_VENV:-.venv}"
[ -x "$VENV/bin/python" ] || python3 -m venv "$VENV"
"$VENV/bin/python" -m pip install -q --upgrade pip
"$VENV/bin/python" -m pip install -q -e ".[test]"
# the recheck's hot modules of core compiled with mypyc (scripts/build_core.py, DEVELOPERS.md); if that is not
# possible here, core runs from source: the same results, slower. BRACEWALK_CORE_SOURCE=1 skips the build.
if [ -z "${BRACEWALK_CORE_SOURCE:-}" ]; then
  "$VENV/bin/python" scripts/build_core.py || echo "setup: core not compiled; it runs from source (same results, slower)"
fi
