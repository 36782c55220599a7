"""User text made safe for G-code comments.

Everything that reaches a comment of a written program (piece ids, stock names, header values
taken from the job or the plan) passes through :func:`comment_safe` first. A comment in
RS274/NGC is ``( ... )`` and ends at the first ``)``; a newline ends the whole block; ``;``
starts a rest-of-line comment in several controllers; ``%`` delimits a program file. Any of
them taken from user text could end the comment early and turn the rest into live G-code
words, so none survives.

Some interpreters also act on comments that start with a keyword: LinuxCNC's ``MSG,``,
``DEBUG,``, ``PRINT,``, ``LOG...``, ``PROBEOPEN`` and ``PROBECLOSE``, and the ``AXIS,``
and ``PREVIEW,`` directives of its preview (see the RS274/NGC comment rules in the LinuxCNC
G-code manual). :func:`comment_block` prefixes such text so that it stays a plain comment.
"""

from __future__ import annotations

import re
import textwrap

__all__ = [
    "COMMENT_MAX_CHARS",
    "comment_safe",
    "comment_block",
    "comment_lines",
    "ACTIVE_COMMENT_PREFIXES",
]

COMMENT_MAX_CHARS = 200
"""Default length limit of one sanitized text, characters."""

ACTIVE_COMMENT_PREFIXES = (
    "MSG",
    "DEBUG",
    "PRINT",
    "LOG",
    "PROBEOPEN",
    "PROBECLOSE",
    "AXIS",
    "PREVIEW",
)
"""Comment openings an interpreter may act on (compared without case and spaces)."""

# Characters replaced by a look-alike that cannot end or open a comment.
_REPLACE = {"(": "[", ")": "]", ";": ",", "%": " pct", "\t": " ", "\n": " ", "\r": " "}
_SPACES = re.compile(r" {2,}")


def comment_safe(text: object, max_chars: int = COMMENT_MAX_CHARS) -> str:
    """Return ``text`` as a string that can sit inside ``( ... )`` without changing the program.

    Parameters
    ----------
    text : object
        Any value; it is converted with ``str``.
    max_chars : int
        Longest result, characters (at least 1). Longer text is cut and ends with ``...``.

    Returns
    -------
    str
        Printable ASCII only (codes 32-126), without ``(``, ``)``, ``;``, ``%``, newline or
        carriage return: parentheses become brackets, ``;`` a comma, ``%`` the word ``pct``,
        line breaks and tabs a space, any other character ``?``. Runs of spaces are collapsed
        and the ends stripped.
    """
    max_chars = max(1, int(max_chars))
    out = []
    for ch in str(text):
        if ch in _REPLACE:
            out.append(_REPLACE[ch])
        elif " " <= ch <= "~":
            out.append(ch)
        else:
            out.append("?")
    safe = _SPACES.sub(" ", "".join(out)).strip()
    if len(safe) > max_chars:
        safe = safe[:max_chars] if max_chars < 4 else safe[: max_chars - 3].rstrip() + "..."
    return safe


def _is_active(safe: str) -> bool:
    head = safe.replace(" ", "").upper()
    return any(head.startswith(p) for p in ACTIVE_COMMENT_PREFIXES)


def comment_block(text: object, max_chars: int = COMMENT_MAX_CHARS) -> str:
    """One comment block ``(text)`` of sanitized text, never an active comment.

    Parameters
    ----------
    text : object
        The comment's content (user text allowed).
    max_chars : int
        Length limit of the content, characters.

    Returns
    -------
    str
        ``"(" + comment_safe(text) + ")"``; when the content would start with one of
        :data:`ACTIVE_COMMENT_PREFIXES` it is prefixed with ``"note "``.
    """
    safe = comment_safe(text, max_chars)
    if _is_active(safe):
        safe = comment_safe("note " + safe, max_chars)
    return f"({safe})"


def comment_lines(text: object, width: int = 80, max_chars: int = 1000) -> list[str]:
    """Sanitized text wrapped into comment blocks of at most ``width`` characters each.

    Parameters
    ----------
    text : object
        The comment's content (user text allowed).
    width : int
        Longest line including the two parentheses, characters (at least 12).
    max_chars : int
        Length limit of the whole sanitized content before wrapping, characters.

    Returns
    -------
    list of str
        One or more lines ``( ... )``; an empty text gives one empty comment ``()``.
    """
    width = max(12, int(width))
    safe = comment_safe(text, max_chars)
    if _is_active(safe):
        safe = comment_safe("note " + safe, max_chars)
    inner = width - 4  # room for the parentheses and a "- " that may be needed below
    parts = textwrap.wrap(safe, inner, break_long_words=True, break_on_hyphens=False) or [""]
    lines = []
    for part in parts:
        if _is_active(part):
            part = "- " + part  # a wrapped continuation could start with a keyword too
        lines.append(f"({part})")
    return lines
