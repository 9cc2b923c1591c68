"""Exit codes and the user-error type shared by the command line (cli.py) and its subcommands (commands.py)."""

from __future__ import annotations

EXIT_OK, EXIT_FAILURE, EXIT_BAD_INPUT = 0, 1, 2


class UserError(Exception):
    """A mistake in the user's input: reported on stderr with exit status 2, never a traceback."""
