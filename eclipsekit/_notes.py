"""Warnings of the analysis steps, kept for the result objects and issued to the caller.

A public function is a sequence of private steps, so a fixed ``stacklevel`` would point
into the package from most of them.  :func:`warn` attributes each warning to the first
frame outside the package instead: the user's own line (the approach of pandas'
``find_stack_level``; Python 3.12's ``skip_file_prefixes`` does the same).
"""

from __future__ import annotations

import os
import sys
import warnings

from .errors import EclipsekitWarning

__all__ = ["Notes", "warn"]

_PACKAGE_DIR = os.path.join(os.path.dirname(os.path.abspath(__file__)), "")


def warn(message: str) -> None:
    """Issue ``message`` as an :class:`EclipsekitWarning` from the caller's first frame outside eclipsekit."""
    level, frame = 1, sys._getframe(0)
    while frame is not None and os.path.abspath(frame.f_code.co_filename).startswith(_PACKAGE_DIR):
        frame = frame.f_back
        level += 1
    warnings.warn(message, EclipsekitWarning, stacklevel=level)


class Notes:
    """The messages of one analysis step, in order: warnings (also issued) and plain notes."""

    def __init__(self) -> None:
        self.messages: list[str] = []

    def warn(self, message: str) -> None:
        """Record ``message`` and issue it as a warning."""
        self.messages.append(message)
        warn(message)

    def note(self, message: str) -> None:
        """Record ``message`` without a warning (information, not a caution)."""
        self.messages.append(message)
