"""The one error root of wirecut and its subclasses.

Every refusal the tool makes raises a :class:`WirecutError`. Subclasses also inherit the
matching built-in exception, so callers that catch ``ValueError`` or ``OSError`` still work.
The CLI turns any ``WirecutError`` into one line on stderr and exit code 2.
"""

from __future__ import annotations

__all__ = [
    "WirecutError",
    "ProfileError",
    "MeshError",
    "JobError",
    "GcodeError",
    "OutputError",
    "TravelError",
]


class WirecutError(Exception):
    """Root of every error wirecut raises on purpose."""


class ProfileError(WirecutError, ValueError):
    """The job profile (TOML) is malformed or has an unknown key, a wrong type or a bad value."""


class MeshError(WirecutError, ValueError):
    """The mesh cannot be read or is not a usable surface (empty, NaN, zero area, no faces...)."""


class JobError(WirecutError, ValueError):
    """The job cannot be done as asked (stock too small, nothing cuttable, bad option)."""


class TravelError(JobError):
    """A programmed position would fall outside the machine's travel."""


class GcodeError(WirecutError, ValueError):
    """A G-code program cannot be read (unknown word, malformed number, unsupported mode)."""


class OutputError(WirecutError, OSError):
    """An output path cannot be written (it is a file, a folder without permission, ...)."""
