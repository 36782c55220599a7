"""Non-fatal problems as data.

A :class:`Finding` is something the user must read ("3% of the surface exceeds tolerance",
"piece P07 needs the long stock"). Stages return lists of findings; the CLI prints them and
sets exit code 1 when any has severity ``"attention"``.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum

__all__ = ["Severity", "Finding", "needs_attention"]


class Severity(str, Enum):
    """How much a finding matters. ``attention`` makes the CLI exit with code 1."""

    INFO = "info"
    ATTENTION = "attention"


@dataclass(frozen=True)
class Finding:
    """One non-fatal problem.

    Attributes
    ----------
    code : str
        Stable kebab-case identifier, e.g. ``"out-of-tolerance"``; documented in docs/findings.md.
    message : str
        One human sentence, with the numbers that matter.
    piece : str or None
        Piece id such as ``"P03"``, or None when the finding concerns the whole job.
    severity : Severity
        ``INFO`` for notes, ``ATTENTION`` for what the user must act on.
    """

    code: str
    message: str
    piece: str | None = None
    severity: Severity = Severity.ATTENTION

    def to_json(self) -> dict:
        """The ``findings`` entry of plan.json: the contract's code, piece and message, and
        the severity (``info`` or ``attention``, an extension of the contract)."""
        return {
            "code": self.code,
            "piece": self.piece,
            "message": self.message,
            "severity": self.severity.value,
        }


def needs_attention(findings: list[Finding]) -> bool:
    """True when any finding must be read by the user (CLI exit code 1)."""
    return any(f.severity is Severity.ATTENTION for f in findings)
