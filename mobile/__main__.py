"""``python -m mobile``: open the tablet app (same as ``bracewalk`` with no arguments)."""

from mobile.cli import main

raise SystemExit(main())
