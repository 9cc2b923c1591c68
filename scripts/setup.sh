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
    chromium chromium-driver fonts-noto-core fonts-noto-color-emoji fonts-droid-fallback fonts-nanum >/dev/null
fi
VENV="${BRACEWALK_VENV:-.venv}"
[ -x "$VENV/bin/python" ] || python3 -m venv "$VENV"
"$VENV/bin/python" -m pip install -q --upgrade pip
"$VENV/bin/python" -m pip install -q -e ".[test]"
