"""Progress bars: the one place that decides whether they are shown.

Shown only when asked for (``progress=True``; the command line's ``--quiet`` turns them off)
and when standard error is a terminal: a bar redrawn with carriage returns is noise in a
log file or a pipe (common practice for command-line tools).
"""

from __future__ import annotations

import sys
from collections.abc import Iterable
from typing import Any

__all__ = ["show_progress", "progress_bar"]


def show_progress(progress: bool) -> bool:
    """Whether to draw progress bars: asked for, and standard error is a terminal."""
    isatty = getattr(sys.stderr, "isatty", None)
    return bool(progress) and callable(isatty) and bool(isatty())


def progress_bar(iterable: Iterable[Any] | None = None, *, progress: bool, **kwargs: Any) -> Any:
    """A tqdm bar (to standard error) that is disabled unless :func:`show_progress` says otherwise."""
    from tqdm import tqdm

    return tqdm(iterable, disable=not show_progress(progress), **kwargs)
