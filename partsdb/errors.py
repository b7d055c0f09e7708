"""The errors partsdb raises on purpose, each carrying the exit code the command line gives it.

Every face catches :class:`PartsdbError` (never a class name): the CLI prints its one-line
message and exits with ``exit_code``; the TUI shows the message and keeps running.

Exit codes (documented in the README):

====  =====================================================================
 0    success
 1    not found (a device, place or swap that is not stored)
 2    invalid input or a refused request; nothing was written
 3    database or environment trouble (unreachable server, locked file, disk)
====  =====================================================================
"""

from __future__ import annotations

EXIT_OK = 0
EXIT_NOT_FOUND = 1
EXIT_INVALID = 2
EXIT_ENVIRONMENT = 3


class PartsdbError(Exception):
    """Base of every error partsdb raises on purpose; ``exit_code`` says how the CLI ends."""

    exit_code: int = EXIT_ENVIRONMENT


class NotFoundError(PartsdbError, LookupError):
    """Something named is not stored (exit 1)."""

    exit_code = EXIT_NOT_FOUND


class InvalidInput(PartsdbError, ValueError):
    """Input that cannot be used, or a request refused; nothing was written (exit 2)."""

    exit_code = EXIT_INVALID


class EnvironmentProblem(PartsdbError, RuntimeError):
    """The database, a file or the machine is not in a state to do the job (exit 3)."""

    exit_code = EXIT_ENVIRONMENT
