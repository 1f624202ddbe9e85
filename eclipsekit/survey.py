"""Survey scale: many light curves on dask.distributed, one resumable Parquet catalogue.

:func:`survey` finds the targets among its inputs (files, folders searched recursively,
or a table listing files), sends each target to a dask.distributed cluster as one coarse
task -- the file's path, never its arrays -- and collects one catalogue row per target.
Each task runs the ordinary pipeline on its file (:func:`~eclipsekit.find_period` for
the ``search`` stage, :func:`~eclipsekit.analyse` otherwise), writes the target's result
folder and its catalogue row (:mod:`eclipsekit.catalogue`) and returns the row.

Failures stay with their target: an unreadable file, an analysis that raises, a target
over the time limit or a worker process that dies becomes a row with a status word and a
one-line message, and the batch goes on.  A re-run skips every target whose row was made
from the same file content and settings (a SHA-256 hash of both) unless ``redo``.

Workers must see the same file system as the client (the inputs and ``out``): the
tasks carry paths, as a shared disk on a cluster provides.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import logging
import math
import os
import re
import signal
import sys
import threading
import time as _time
import types
import warnings
from collections import Counter
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from . import catalogue
from ._version import __version__
from .errors import EclipsekitWarning, InputError, NoEclipseFound

__all__ = ["survey", "summarise", "collect_targets", "run_target", "Target", "SurveySettings", "STAGES",
           "LIGHT_CURVE_SUFFIXES"]

#: ``search``: period and eclipse verdict; ``fit``: also the eclipse fit; ``all``: also the
#: velocities and temperatures a listing table gives.
STAGES = ("search", "fit", "all")
#: File name endings taken as light curves when a folder is searched (case-insensitive).
LIGHT_CURVE_SUFFIXES = (".csv", ".txt", ".dat", ".tsv", ".ecsv", ".fits", ".fit", ".fts")
#: Column naming the light-curve files in a listing table (first match, case-insensitive).
LISTING_FILE_COLUMNS = ("light_curve", "file", "path")
_LISTING_SUFFIXES = (".csv", ".txt", ".dat", ".tsv", ".ecsv", ".list")
#: Statuses that depend on the machine rather than the data: retried by a re-run.
RETRIED = ("timeout", "crashed")
#: A period hint restricts the search to [P / (1 + f), P (1 + f)] with f = PERIOD_HINT_RANGE.
PERIOD_HINT_RANGE = 0.2


@dataclass(frozen=True)
class Target:
    """One light curve of a survey, as a task receives it (paths only).

    Attributes
    ----------
    source : str
        The path as given (on the command line, or in the listing table).
    path : str
        Absolute path of the light curve.
    velocities : str or None
        Absolute path of a radial-velocity file (listing table's ``velocities`` column).
    teff_primary, teff_secondary : (value, error) or None
        Effective temperatures (K) from the listing table.
    period_hint : float or None
        A period (days) near which to search.
    """

    source: str
    path: str
    velocities: str | None = None
    teff_primary: tuple[float, float] | None = None
    teff_secondary: tuple[float, float] | None = None
    period_hint: float | None = None

    @property
    def ident(self) -> str:
        """Hex digest of the absolute path: the target's name in ``parts/`` and ``targets/``."""
        return hashlib.sha256(self.path.encode("utf-8")).hexdigest()[:24]

    @property
    def folder(self) -> str:
        """The result folder, relative to the survey's output folder."""
        stem = re.sub(r"[^A-Za-z0-9._-]+", "_", Path(self.path).stem)[:60] or "target"
        return f"targets/{stem}-{self.ident[:10]}"


@dataclass(frozen=True)
class SurveySettings:
    """The options every task of one survey shares."""

    stages: str = "all"
    figures: bool = False
    redo: bool = False
    version: str = field(default=__version__)

    def key_content(self, target: Target) -> dict[str, Any]:
        """What, besides the input files' bytes, decides a target's result."""
        return {"stages": self.stages, "figures": self.figures, "version": self.version,
                "teff_primary": target.teff_primary if self.stages == "all" else None,
                "teff_secondary": target.teff_secondary if self.stages == "all" else None,
                "period_hint": target.period_hint}


# ---- inputs -------------------------------------------------------------------------------
def collect_targets(inputs: Sequence[str | os.PathLike], out: str | os.PathLike | None = None) -> list[Target]:
    """The targets named by ``inputs``: files, folders (searched recursively) or listing tables.

    A file whose header has a ``light_curve`` (or ``file``, ``path``) column is a
    listing table: one target per row, paths relative to the table's folder, with the
    optional columns ``velocities``, ``teff_primary``, ``teff_primary_err``,
    ``teff_secondary``, ``teff_secondary_err`` and ``period`` (a hint, days).  Folders
    give every file ending in one of :data:`LIGHT_CURVE_SUFFIXES`, in sorted order,
    skipping hidden files and the output folder ``out``.  A path that does not exist
    stays a target: its row will say so.  A file named twice is one target.

    Raises
    ------
    InputError
        A listing table with an unreadable cell (named by row and column).
    """
    skip = Path(out).resolve() if out is not None else None
    targets: dict[str, Target] = {}
    for given in _as_list(inputs):
        path = Path(given)
        if path.is_dir():
            found = [Target(str(path / p.relative_to(path)), str(p.resolve())) for p in _light_curves_in(path, skip)]
        elif _is_listing(path):
            found = _read_listing(path)
        else:
            found = [Target(str(given), str(path.resolve()))]
        for target in found:
            targets.setdefault(target.path, target)
    return list(targets.values())


def _light_curves_in(folder: Path, skip: Path | None) -> list[Path]:
    found = []
    for root, dirs, files in os.walk(folder):
        here = Path(root)
        dirs[:] = sorted(d for d in dirs if not d.startswith(".") and (skip is None or (here / d).resolve() != skip))
        found += [here / f for f in sorted(files)
                  if not f.startswith(".") and f.lower().endswith(LIGHT_CURVE_SUFFIXES)]
    return found


def _header_names(path: Path) -> list[str]:
    """Column names on the first line that is neither blank nor a comment (lower case)."""
    try:
        with open(path, encoding="utf-8", errors="replace") as fh:
            for _, line in zip(range(200), fh):
                text = line.strip()
                if text and not text.startswith("#"):
                    return [t.strip("\"'").lower() for t in re.split(r"[,\s]+", text) if t]
    except OSError:
        return []
    return []


def _is_listing(path: Path) -> bool:
    return (path.is_file() and path.suffix.lower() in _LISTING_SUFFIXES
            and any(name in LISTING_FILE_COLUMNS for name in _header_names(path)))


def _read_listing(path: Path) -> list[Target]:
    import numpy as np
    from astropy.table import Table

    fmt = "ascii.ecsv" if path.suffix.lower() == ".ecsv" else (
        "ascii.csv" if "," in _first_content_line(path) else "ascii.basic")
    try:
        table = Table.read(path, format=fmt)
    except Exception as exc:  # astropy raises many kinds for a malformed table
        raise InputError(f"{path}: cannot read the listing table ({_one_line(exc)})") from None
    lower = {name.lower(): name for name in table.colnames}
    file_col = next(lower[n] for n in LISTING_FILE_COLUMNS if n in lower)
    targets = []
    for i, row in enumerate(table):
        def cell(name: str) -> Any:
            col = lower.get(name)
            value = None if col is None else row[col]
            return None if value is None or np.ma.is_masked(value) or str(value).strip() == "" else value

        entry = cell(file_col.lower())
        if entry is None:
            raise InputError(f"{path}, row {i + 1}: column {file_col!r} is empty; give a light-curve file")
        velocities = cell("velocities") or cell("rv")
        targets.append(Target(
            source=str(entry), path=str((path.parent / str(entry)).resolve()),
            velocities=None if velocities is None else str((path.parent / str(velocities)).resolve()),
            teff_primary=_value_error(path, i, "teff_primary", cell("teff_primary"), cell("teff_primary_err")),
            teff_secondary=_value_error(path, i, "teff_secondary", cell("teff_secondary"),
                                        cell("teff_secondary_err")),
            period_hint=_number(path, i, "period", cell("period"))))
    return targets


def _first_content_line(path: Path) -> str:
    with open(path, encoding="utf-8", errors="replace") as fh:
        return next((ln for ln in fh if ln.strip() and not ln.lstrip().startswith("#")), "")


def _number(path: Path, i: int, column: str, value: Any) -> float | None:
    if value is None:
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        number = math.nan
    if not (math.isfinite(number) and number > 0):
        raise InputError(f"{path}, row {i + 1}, column {column!r}: expected a positive number, got {value!r}")
    return number


def _value_error(path: Path, i: int, column: str, value: Any, error: Any) -> tuple[float, float] | None:
    number = _number(path, i, column, value)
    if number is None:
        return None
    sigma = _number(path, i, f"{column}_err", error)
    if sigma is None:
        raise InputError(f"{path}, row {i + 1}: {column} needs its uncertainty in column {column + '_err'!r}")
    return number, sigma


# ---- one target (runs on a worker) --------------------------------------------------------
def target_key(target: Target, settings: SurveySettings) -> str:
    """SHA-256 of the input files' bytes and the settings that decide the target's result."""
    digest = hashlib.sha256(json.dumps(settings.key_content(target), sort_keys=True).encode("utf-8"))
    files = [target.path] + ([target.velocities] if target.velocities and settings.stages == "all" else [])
    for name in files:
        digest.update(b"\0file\0")
        try:
            with open(name, "rb") as fh:
                for block in iter(lambda: fh.read(1 << 20), b""):
                    digest.update(block)
        except OSError as exc:
            digest.update(f"unreadable: {exc.__class__.__name__}".encode())
    return digest.hexdigest()


def run_target(target: Target, out: str, settings: SurveySettings) -> tuple[dict[str, Any], bool]:
    """Analyse one target, write its result folder and catalogue part; return (row, skipped).

    The task of a survey; also callable directly.  ``skipped`` is True when an
    up-to-date row already existed (same key, not :data:`RETRIED`) and nothing was computed.
    Every error of the analysis becomes the row's status and message.
    """
    key = target_key(target, settings)
    if not settings.redo:
        old = catalogue.read_part(catalogue.part_path(out, target.ident))
        if old is not None and old["key"] == key and old["status"] not in RETRIED:
            if old["source"] != target.source:  # the same file named another way this time
                old["source"] = target.source
                catalogue.write_part(out, target.ident, old)
            return old, True
    marker = _running_marker(out, target)
    start = _time.perf_counter()
    try:
        row = _compute(target, Path(out), settings)
        row.update(key=key, seconds=_time.perf_counter() - start)
        catalogue.write_part(out, target.ident, row)
        catalogue.append_journal(out, {"source": target.source, "key": key, "status": row["status"],
                                       "seconds": row["seconds"], "pid": os.getpid(), "time": _time.time()})
    finally:
        marker.unlink(missing_ok=True)
    return row, False


def _running_marker(out: str, target: Target) -> Path:
    """``out/.running/<ident>.json``: which worker started the target when (read for ``timeout``)."""
    try:
        from distributed import get_worker

        worker = get_worker().address
    except (ImportError, ValueError):
        worker = None
    marker = Path(out) / ".running" / f"{target.ident}.json"
    marker.parent.mkdir(parents=True, exist_ok=True)
    marker.write_text(json.dumps({"worker": worker, "start": _time.time()}), encoding="utf-8")
    return marker


def _base_row(target: Target, settings: SurveySettings) -> dict[str, Any]:
    row = catalogue.empty_row(target.source)
    row.update(stages=settings.stages, eclipsekit_version=settings.version)
    return row


def _compute(target: Target, out: Path, settings: SurveySettings) -> dict[str, Any]:
    from .data import read_light_curve, read_velocities

    row = _base_row(target, settings)
    try:
        lc = read_light_curve(target.path)
        rv = read_velocities(target.velocities) if target.velocities and settings.stages == "all" else None
    except InputError as exc:
        row.update(status="unreadable", message=_one_line(exc))
        return row
    try:
        analysis = _analyse(lc, rv, target, settings)
        analysis.write(out / target.folder, overwrite=True, figures=settings.figures)
    except Exception as exc:  # noqa: BLE001 -- one target's failure must not stop the batch
        row.update(status="failed", message=f"{type(exc).__name__}: {_one_line(exc)}")
        return row
    row.update(_values(analysis), result_dir=target.folder)
    return row


def _search_range(lc: Any, hint: float | None) -> tuple[float | None, float | None]:
    if hint is None:
        return None, None
    return hint / (1 + PERIOD_HINT_RANGE), min(hint * (1 + PERIOD_HINT_RANGE), lc.baseline)


def _analyse(lc: Any, rv: Any, target: Target, settings: SurveySettings) -> Any:
    """The pipeline on one light curve: the period search alone, or :func:`analyse`."""
    from .pipeline import Analysis, analyse

    min_period, max_period = _search_range(lc, target.period_hint)
    command = f"eclipsekit survey --stages {settings.stages} {target.source}"
    seed = int(target.ident[:8], 16)  # the same sampling whichever worker runs the target
    if settings.stages != "search":
        extra = ({"teff_primary": target.teff_primary, "teff_secondary": target.teff_secondary}
                 if settings.stages == "all" else {})
        return analyse(lc, rv, min_period=min_period, max_period=max_period, progress=False, seed=seed,
                       n_jobs=1, command=command, **extra)
    from .period import find_period

    analysis = Analysis(lc=lc, command=command)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", EclipsekitWarning)
        try:
            analysis.search = find_period(lc, min_period=min_period, max_period=max_period, progress=False,
                                          n_jobs=1)
        except NoEclipseFound as exc:
            analysis.search, analysis.status, analysis.message = exc.search, "no_eclipse_found", str(exc)
    analysis.warnings = list(dict.fromkeys(str(w.message) for w in caught
                                           if issubclass(w.category, EclipsekitWarning)))
    return analysis


def _values(analysis: Any) -> dict[str, Any]:
    """The catalogue columns of one analysis (see :data:`eclipsekit.catalogue.SCHEMA`)."""
    content = analysis.to_dict()
    row: dict[str, Any] = {"status": analysis.status,
                           "message": "" if analysis.status == "ok" else _one_line(analysis.message)}
    search, fit = analysis.search, analysis.eclipse_fit
    found = search is not None and getattr(search, "found", True) and analysis.status != "no_eclipse_found"
    for section in ("ephemeris", "geometry", "photometry", "absolute"):
        for name, q in (content.get(section) or {}).items():
            if name in catalogue.QUANTITIES and isinstance(q, dict) and (found or section != "ephemeris"):
                row[name] = _float(q.get("value"))
                row[f"{name}_uncertainty"] = _float(q.get("uncertainty"))
    if search is not None:
        row["significance"] = _float(search.significance)
    if found and fit is None:
        row.update(depth_primary=_float(search.depth_primary), depth_primary_uncertainty=_float(
            search.depth_primary_err), depth_secondary=_float(search.depth_secondary),
            depth_secondary_uncertainty=_float(search.depth_secondary_err),
            secondary_phase=_float(search.phase_secondary) if search.secondary_detected else math.nan)
    if fit is not None:
        from .orbit import secondary_phase

        v = fit.values
        row["secondary_phase"] = secondary_phase(ecosw=v.get("ecosw", 0.0), esinw=v.get("esinw", 0.0),
                                                 inclination=v["inclination"])
        row["reduced_chi_square"] = _float(fit.redchi)
    lc_info = (content.get("input") or {}).get("light_curve") or {}
    row["n_points"] = int(lc_info.get("n_points_used") or 0)
    return row


def _float(value: Any) -> float:
    try:
        number = float(value)
    except (TypeError, ValueError):
        return math.nan
    return number if math.isfinite(number) else math.nan


def _one_line(exc: Any) -> str:
    lines = [ln.strip() for ln in str(exc).splitlines() if ln.strip()]
    return " ".join(lines)[:500] if lines else (type(exc).__name__ if isinstance(exc, BaseException) else "")


# ---- the client -----------------------------------------------------------------------------
def _default_workers() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        return os.cpu_count() or 1


def _local_cluster_config() -> dict[str, Any]:
    """dask settings of the cluster :func:`survey` starts itself.

    A worker death fails only the task it was running (no retry: one task per
    single-threaded worker).  Two defaults of dask's worker processes slowed the analysis
    (measured on a 20,000-point period search, interleaved with the same work in one
    process): ``MALLOC_TRIM_THRESHOLD_=65536`` in their environment fixes glibc's
    thresholds, so every large numpy temporary is a fresh ``mmap`` (+30%), and the
    statistical profiler samples every 10 ms (about +10% more; noisy).  Both are turned off.
    """
    import dask

    environ = {k: v for k, v in dask.config.get("distributed.nanny.pre-spawn-environ", {}).items()
               if k != "MALLOC_TRIM_THRESHOLD_"}
    return {"distributed.scheduler.allowed-failures": 0, "distributed.nanny.pre-spawn-environ": environ,
            "distributed.worker.profile.enabled": False}


@contextlib.contextmanager
def _client(workers: int | None, scheduler: str | None) -> Iterator[Any]:
    """A dask.distributed Client: to ``scheduler``, or to a new LocalCluster of ``workers`` processes."""
    import dask
    from distributed import Client, LocalCluster

    if scheduler is not None:
        try:
            client = Client(scheduler, timeout=30)
        except (OSError, TimeoutError) as exc:
            raise InputError(f"`scheduler`: cannot reach a dask scheduler at {scheduler!r} ({_one_line(exc)})") \
                from None
        try:
            yield client
        finally:
            client.close()
        return
    with dask.config.set(_local_cluster_config()), \
            LocalCluster(n_workers=workers or _default_workers(), threads_per_worker=1, processes=True,
                         dashboard_address=None, silence_logs=logging.CRITICAL) as cluster, \
            Client(cluster) as client:
        yield client


def _warm_up_worker() -> None:
    """Import the pipeline in a new worker process, so its first target's time (and time
    limit) is the analysis alone."""
    from . import fit, period, pipeline  # noqa: F401


def _preload(client: Any) -> None:
    """Warm up every worker now and every worker that joins later (a restart, a new node)."""
    from distributed.diagnostics.plugin import WorkerPlugin

    class _Preload(WorkerPlugin):
        name = "eclipsekit-preload"

        def setup(self, worker: Any) -> None:
            _warm_up_worker()

    client.register_plugin(_Preload())


class _Run:
    """The client's loop: one task in flight per worker thread, time limits, failures as rows."""

    def __init__(self, client: Any, targets: list[Target], out: Path, settings: SurveySettings,
                 timeout: float | None, bar: Any):
        self.client, self.targets, self.out, self.settings = client, targets, out, settings
        self.timeout, self.bar = timeout, bar
        self.pending: dict[Any, Target] = {}
        self.restarted: set[str] = set()  # workers restarted to stop a target over the time limit
        self.counts: Counter[str] = Counter()

    def run(self) -> Counter[str]:
        from distributed import wait

        queue = iter(self.targets)
        while True:
            # one task per worker thread: a worker holds only the target it runs, so a worker restarted
            # (time limit) or dead (crash) takes no other target with it
            window = max(1, sum(self.client.nthreads().values()))
            while len(self.pending) < window and (target := next(queue, None)) is not None:
                self._submit(target)
            if not self.pending:
                return self.counts
            try:
                done, _ = wait(list(self.pending), timeout=1.0, return_when="FIRST_COMPLETED")
            except TimeoutError:
                done = set()
            for future in done:
                self._finished(future, self.pending.pop(future))
            if self.timeout is not None:
                self._check_timeouts()

    def _submit(self, target: Target) -> None:
        future = self.client.submit(run_target, target, str(self.out), self.settings, pure=False,
                                    key=f"survey-{target.ident}-{_time.time_ns()}")
        self.pending[future] = target

    def _finished(self, future: Any, target: Target) -> None:
        from distributed.client import FutureCancelledError
        from distributed.scheduler import KilledWorker

        try:
            row, skipped = future.result()
        except FutureCancelledError:
            return
        except KilledWorker as exc:
            if getattr(exc.last_worker, "address", None) in self.restarted:  # our restart, not its fault
                self._submit(target)
                return
            row, skipped = self._failure(target, "crashed", "the worker process died while analysing this target "
                                         "(out of memory, or a crash in compiled code); a re-run retries it"), False
        except Exception as exc:  # noqa: BLE001 -- e.g. a task that could not be sent
            row, skipped = self._failure(target, "failed", f"{type(exc).__name__}: {_one_line(exc)}"), False
        self._count(row["status"], skipped)

    def _count(self, status: str, skipped: bool) -> None:
        self.counts["skipped" if skipped else "computed"] += 1
        self.counts[status] += 1
        self.bar.update(1)
        self.bar.set_postfix(done=self.counts["computed"] + self.counts["skipped"],
                             failed=sum(self.counts[s] for s in catalogue.FAILURES), refresh=False)

    def _failure(self, target: Target, status: str, message: str) -> dict[str, Any]:
        """Record a row the task could not write itself (timeout, worker death)."""
        row = _base_row(target, self.settings)
        row.update(status=status, message=message, key=target_key(target, self.settings))
        catalogue.write_part(self.out, target.ident, row)
        catalogue.append_journal(self.out, {"source": target.source, "key": row["key"], "status": status,
                                            "pid": os.getpid(), "time": _time.time()})
        return row

    def _check_timeouts(self) -> None:
        now = _time.time()
        for future, target in list(self.pending.items()):
            marker = self.out / ".running" / f"{target.ident}.json"
            try:
                started = json.loads(marker.read_text(encoding="utf-8"))
            except (OSError, ValueError):
                continue  # queued, or just finished
            if future.done() or now - started["start"] <= self.timeout:
                continue
            del self.pending[future]
            row = self._failure(target, "timeout", f"stopped after the time limit of {self.timeout:g} s per "
                                                   "target (--timeout); a re-run retries it")
            # Release the task (a restart alone would reschedule it), then stop the computation by
            # restarting its worker process; no other target waits for that worker (one task in
            # flight per thread), so the restart takes none with it.
            future.cancel()
            if started.get("worker"):
                self.restarted.add(started["worker"])
                with contextlib.suppress(Exception):
                    self.client.restart_workers([started["worker"]], raise_for_error=False)
            marker.unlink(missing_ok=True)
            self._count(row["status"], False)


@contextlib.contextmanager
def _sigterm_as_interrupt() -> Iterator[None]:
    """SIGTERM stops the run as Ctrl-C does (finished targets kept, catalogue written)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def _raise(signum: int, frame: Any) -> None:
        raise KeyboardInterrupt

    previous = signal.signal(signal.SIGTERM, _raise)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def _check_options(stages: str, workers: int | None, timeout: float | None) -> None:
    if stages not in STAGES:
        raise InputError(f"`stages` must be one of {', '.join(STAGES)}, got {stages!r}")
    if workers is not None and (int(workers) != workers or workers < 1):
        raise InputError(f"`workers` must be a positive whole number, got {workers!r}")
    if timeout is not None and not (math.isfinite(timeout) and timeout > 0):
        raise InputError(f"`timeout` must be a positive number of seconds, got {timeout!r}")


def survey(inputs: str | os.PathLike | Sequence[str | os.PathLike], out: str | os.PathLike, *,
           workers: int | None = None, scheduler: str | None = None, stages: str = "all", redo: bool = False,
           timeout: float | None = None, figures: bool = False, progress: bool = True) -> Any:
    """Analyse many light curves on dask.distributed into the catalogue ``out/catalogue.parquet``.

    Parameters
    ----------
    inputs : path or sequence of paths
        Light-curve files, folders (searched recursively, see :func:`collect_targets`)
        and listing tables (which may give velocities, temperatures and a period hint).
    out : path
        Output folder: ``catalogue.parquet``, ``parts/`` (one row per finished target),
        ``targets/`` (each target's result.json and tables), ``figures/``, ``journal.jsonl``.
    workers : int, optional
        Worker processes of the local cluster, one thread each (default: the CPU cores).
    scheduler : str, optional
        Address of a running dask scheduler (e.g. ``"tcp://10.0.0.5:8786"``) to use instead.
    stages : {'search', 'fit', 'all'}
        ``search``: period and eclipse verdict; ``fit``: also the eclipse fit; ``all``:
        also the velocities and temperatures of a listing table.
    redo : bool
        Recompute targets already in the catalogue with the same input and settings.
    timeout : float, optional
        Seconds one target may run; past it the target's row says ``timeout`` and its
        worker is restarted.
    figures : bool
        Also draw each target's figures (slow; the catalogue figures are always drawn).
    progress : bool
        A progress bar (done, failed, rate, ETA), on a terminal only.

    Returns
    -------
    astropy.table.Table
        The catalogue (one row per target, in input order; units from the Parquet
        metadata); ``meta`` counts the targets ``computed`` and ``skipped`` this run.

    Raises
    ------
    InputError
        Bad options, no target found, or an unreachable ``scheduler``.  An interrupt
        (Ctrl-C, SIGTERM) still writes the catalogue of the targets finished, then is
        raised again.

    Notes
    -----
    Each target is one task (dask.distributed; Rocklin 2015, Proc. 14th Python in Science
    Conf., 130) that runs the ordinary pipeline on the file's path.
    """
    from ._progress import progress_bar

    _check_options(stages, workers, timeout)
    targets = collect_targets(inputs, out)
    if not targets:
        raise InputError(f"no light-curve files found in `inputs` {[str(i) for i in _as_list(inputs)]}; "
                         f"give files, folders holding files ending in {', '.join(LIGHT_CURVE_SUFFIXES)}, "
                         "or a listing table with a light_curve column")
    folder = Path(out)
    try:
        (folder / "parts").mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"`out`: cannot create the output folder {str(folder)!r} ({exc.strerror})") from None
    for stale in (folder / ".running").glob("*.json"):  # markers of a run that was stopped
        stale.unlink(missing_ok=True)
    settings = SurveySettings(stages=stages, figures=figures, redo=redo)
    clock = _time.perf_counter()
    bar = progress_bar(total=len(targets), progress=progress, unit="target")
    try:
        with _sigterm_as_interrupt(), _client(workers, scheduler) as client:
            _preload(client)
            counts = _Run(client, targets, folder, settings, timeout, bar).run()
    finally:
        bar.close()
        parts = [p for p in (catalogue.part_path(folder, t.ident) for t in targets) if p.is_file()]
        catalogue.compact(parts, folder / "catalogue.parquet")
    table = catalogue.read_catalogue(folder / "catalogue.parquet")
    table.meta.update(computed=counts["computed"], skipped=counts["skipped"],
                      seconds=_time.perf_counter() - clock, out=str(folder))
    _catalogue_figures(table, folder / "figures")
    return table


def _as_list(inputs: Any) -> list[Any]:
    return [inputs] if isinstance(inputs, (str, os.PathLike)) else list(inputs)


def _catalogue_figures(table: Any, folder: Path) -> None:
    from .plots import plot_catalogue, save_figure

    folder.mkdir(parents=True, exist_ok=True)
    for name, fig in plot_catalogue(table).items():
        save_figure(fig, folder, name, formats=("png",))


def summarise(table: Any) -> str:
    """What a survey found: eclipsing binaries, no eclipse, failures by reason (a few lines)."""
    status = Counter(str(s) for s in table["status"]) if len(table) else Counter()
    answered = ("ok", "poor_fit", "caution")
    n_eb = sum(status[s] for s in answered)
    lines = [f"Survey of {len(table)} targets ({table.meta.get('computed', 0)} computed, "
             f"{table.meta.get('skipped', 0)} already done)"]
    detail = ", ".join(f"{s} {status[s]}" for s in answered if status[s])
    lines.append(f"  eclipsing binaries found: {n_eb}" + (f" ({detail})" if detail else ""))
    lines.append(f"  no eclipse found:         {status['no_eclipse_found']}")
    failed = [(s, status[s]) for s in catalogue.FAILURES if status[s]]
    lines.append("  failures:                 " + (", ".join(f"{s} {n}" for s, n in failed) if failed else "none"))
    for s, _ in failed:
        example = next(row for row in table if row["status"] == s)
        where = "" if str(example["source"]) in str(example["message"]) else f"{example['source']}: "
        lines.append(f"    e.g. {s}: {where}{example['message']}")
    out = table.meta.get("out")
    if out:
        lines.append(f"Catalogue: {Path(out) / 'catalogue.parquet'}; figures in {Path(out) / 'figures'}/")
    return "\n".join(lines)


class _CallableModule(types.ModuleType):
    """``eclipsekit.survey`` is both this module and its function: importing the module
    (``import eclipsekit.survey``, or a dask worker unpickling a task) sets the package's
    ``survey`` attribute to the module, so the module calls the function."""

    def __call__(self, *args: Any, **kwargs: Any) -> Any:
        return survey(*args, **kwargs)


sys.modules[__name__].__class__ = _CallableModule
