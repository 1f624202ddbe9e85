"""The output folder: checked before any computing, filled all at once at the end.

The rule (also in the README, "What a run writes"):

- A run writes all its files into a hidden staging folder first; nothing in the output
  folder changes while the analysis computes and the files are written, so a failure or an
  interruption there (full disk, plotting error, Ctrl-C) leaves the previous result as it was
  and removes the staging folder.
- A **new** output folder is staged as a hidden sibling ``.NAME.eclipsekit-XXXX`` and renamed
  to ``NAME`` when complete: one atomic rename.
- An **existing** folder (``overwrite``) may hold the user's own files, so it is never moved or
  replaced as a whole: the staging folder is a hidden subfolder of it (same file system, so
  every rename is atomic), and when all files are written each is renamed into place.  Then
  the files listed in the previous run's manifest (:data:`MANIFEST`) that this run did not
  write are removed, unless they changed since eclipsekit wrote them.  A file eclipsekit did
  not write is never removed.  Ctrl-C is held back during these renames (milliseconds) and
  delivered after them.
- Every run writes the manifest last: the files of that run with their SHA-256 digests.
"""

from __future__ import annotations

import hashlib
import json
import os
import secrets
import shutil
import signal
import threading
import warnings
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from ._version import __version__
from .errors import EclipsekitWarning, InputError

__all__ = ["MANIFEST", "prepare_output_dir", "output_folder"]

#: The list of the files a run wrote, in the output folder.
MANIFEST = "eclipsekit_manifest.json"

_STAGE_TAG = ".eclipsekit-"


def prepare_output_dir(path: str | os.PathLike, overwrite: bool = False) -> Path:
    """Check, before any computing, that the folder ``path`` can take the result files.

    The folder itself is not created (it appears complete at the end, :func:`output_folder`);
    missing parent folders are.  An existing non-empty folder is refused unless ``overwrite``.

    Raises
    ------
    InputError
        ``path`` is a file, a non-empty folder without ``overwrite``, or cannot be written;
        the message names the folder.
    """
    out = Path(path)
    shown = repr(str(out))
    if out.exists() and not out.is_dir():
        raise InputError(f"output folder {shown} is a file; give a folder name with `out`")
    if out.is_dir() and any(out.iterdir()) and not overwrite:
        raise InputError(f"output folder {shown} is not empty; use `overwrite` or another `out`")
    try:
        _parent(out).mkdir(parents=True, exist_ok=True)
        probe = _new_stage(out)  # the folder the results will be staged in, created and removed
        probe.rmdir()
    except OSError as exc:
        raise InputError(f"output folder {shown} cannot be written ({exc.strerror or exc}); "
                         f"choose another `out`") from None
    return out


@contextmanager
def output_folder(path: str | os.PathLike, *, overwrite: bool = False,
                  command: str | None = None) -> Iterator[Path]:
    """Stage the result files of one run and put them in the folder ``path`` only when all are written.

    Yields the staging folder to write into.  On a normal exit the files are moved into
    ``path`` (see the module's rule) with a manifest of them; on an exception the staging
    folder is removed and ``path`` is left as it was.  An ``OSError`` on a staged file is
    raised again naming ``path``.
    """
    out = prepare_output_dir(path, overwrite=overwrite)
    stage = _new_stage(out)
    try:
        yield stage
        _commit(stage, out, command)
    except OSError as exc:
        if exc.filename is None or str(stage) not in str(exc.filename):
            raise
        # name the output folder, not the hidden staging file (e.g. a full disk while writing)
        raise OSError(exc.errno, exc.strerror, str(out)) from exc
    finally:
        shutil.rmtree(stage, ignore_errors=True)


# -- staging -------------------------------------------------------------------------------
def _parent(out: Path) -> Path:
    return Path(os.path.abspath(out)).parent


def _new_stage(out: Path) -> Path:
    """A new, empty hidden folder: inside ``out`` when it exists, else beside it.

    Made by ``os.mkdir``, so its permissions follow the umask like any folder the user makes.
    """
    if out.is_dir():
        where, prefix = out, _STAGE_TAG
    else:
        where, prefix = _parent(out), f".{Path(os.path.abspath(out)).name}{_STAGE_TAG}"
    while True:
        stage = where / f"{prefix}{secrets.token_hex(4)}"
        try:
            stage.mkdir()
            return stage
        except FileExistsError:
            continue


def _commit(stage: Path, out: Path, command: str | None) -> None:
    """Move the staged files into ``out`` and remove the previous run's files that are now stale."""
    names = sorted(p.name for p in stage.iterdir() if p.is_file())
    files = {name: _digest(stage / name) for name in names}
    previous = _read_manifest(out)
    manifest = {"written_by": f"eclipsekit {__version__}", "command": command, "files": files}
    (stage / MANIFEST).write_text(json.dumps(manifest, indent=2) + "\n", encoding="utf-8")
    if not out.exists():
        try:
            os.rename(stage, out)  # a new folder: appears complete, at once
            return
        except OSError:
            pass  # made meanwhile by someone else: fill it file by file below
    kept = []
    with _interrupt_held_back():
        for name in [*names, MANIFEST]:
            os.replace(stage / name, out / name)
        for name, digest in previous.items():
            target = out / name
            if name in files or not target.is_file():
                continue
            if _digest(target) == digest:
                target.unlink()
            else:
                kept.append(name)
    if kept:
        warnings.warn(f"kept {', '.join(kept)} in {str(out)!r}: written by an earlier run but changed since",
                      EclipsekitWarning, stacklevel=3)


def _read_manifest(out: Path) -> dict[str, str]:
    """The files (name -> SHA-256) an earlier run listed in ``out``; none if there is no readable manifest.

    Only plain file names are trusted, so an edited manifest cannot point outside the folder.
    """
    try:
        files = json.loads((out / MANIFEST).read_text(encoding="utf-8"))["files"]
    except (OSError, ValueError, KeyError, TypeError):
        return {}
    if not isinstance(files, dict):
        return {}
    return {name: digest for name, digest in files.items()
            if isinstance(name, str) and isinstance(digest, str) and name == Path(name).name
            and not name.startswith(".") and name != MANIFEST}


def _digest(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


@contextmanager
def _interrupt_held_back() -> Iterator[None]:
    """Hold Ctrl-C back while the files are renamed into place, then deliver it."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    pressed: list[int] = []
    previous = signal.signal(signal.SIGINT, lambda signum, frame: pressed.append(signum))
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, previous if previous is not None else signal.SIG_DFL)
    if pressed:
        raise KeyboardInterrupt
