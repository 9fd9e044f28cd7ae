"""Batch runs and parameter sweeps, in parallel processes or on a Dask cluster.

A *job* is ``(label, source, options)``: ``source`` is a
:class:`~soapfilm.profile.Profile`, a path to any section file the readers
know, or a :class:`Variant` (a shape file with some dimensions changed);
``options`` are keywords of :func:`soapfilm.analyse` plus ``units`` (the
length unit assumed for files without one).  :func:`run_batch` runs the jobs
and returns one plain ``dict`` row per job, in input order.  Each job is
isolated: a job that fails gives a row whose ``error`` holds the message, and
the other jobs go on.

:func:`sweep` (or :func:`plan_sweep` then :func:`run_batch`) analyses a
shape file for every combination of the values given to some of its keys.
The sections are built by the shape-file reader itself
(:func:`soapfilm.readers.shapefile.shapefile_from_document`), so a
combination the reader rejects (say a corner radius larger than half the
side) becomes an error row.

Rows hold plain numbers in the section's length unit::

    label, inputs, units, J, J_lo, J_hi, tau_max_per_T, Wt, d_J, d_tau, area,
    Ip, J_per_Ip, elements, converged, warnings, warning_messages, seconds, error

Examples
--------
>>> from soapfilm import Profile
>>> from soapfilm.batch import run_batch
>>> sq = Profile.from_loops([[(0, 0), (1, 0), (1, 1), (0, 1)]])
>>> rows = run_batch([("square", sq, {"mesh_size": 0.1})], workers=1)
>>> bool(rows[0]["J_lo"] <= 0.1405770 <= rows[0]["J_hi"])  # Timoshenko & Goodier, sec. 109
True
"""

from __future__ import annotations

import concurrent.futures as cf
import contextlib
import copy
import csv
import functools
import io
import itertools
import logging
import math
import multiprocessing
import os
import re
import time
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from .errors import InputError, SoapfilmError
from .profile import LENGTH_UNITS, Profile
from .result import CAUTION, json_ready

__all__ = [
    "Job", "Variant", "SweepPlan", "run_batch", "run_job", "run_job_noting_reads", "sweep", "plan_sweep",
    "parse_values", "parse_vary", "output_unit", "rows_in_unit", "csv_text", "document",
    "QUANTITIES", "OPTION_KEYS",
]

log = logging.getLogger(__name__)

#: options a job may carry: keywords of :func:`soapfilm.analyse`, and ``units``
OPTION_KEYS = ("units", "mesh_size", "method", "tol", "peak_tol", "max_elements", "order",
               "layers", "join_tolerance", "memory")

#: row key -> (power of length, CSV column stem, meaning)
QUANTITIES: dict[str, tuple[int, str, str]] = {
    "J": (4, "J", "torsion constant, centre of the guaranteed bracket"),
    "J_lo": (4, "J_lo", "guaranteed lower bound of J (stress function)"),
    "J_hi": (4, "J_hi", "guaranteed upper bound of J (warping function)"),
    "tau_max_per_T": (-3, "tau_max_per_T", "peak shear stress per unit torque"),
    "Wt": (3, "Wt", "torsional section modulus T / tau_max"),
    "d_J": (1, "d_J", "round bar diameter with the same J"),
    "d_tau": (1, "d_tau", "round bar diameter with the same Wt"),
    "area": (2, "area", "net area"),
    "Ip": (4, "Ip", "polar moment of area about the centroid"),
    "J_per_Ip": (0, "J_per_Ip", "J / Ip"),
}
_OTHER = ("elements", "converged", "warnings", "seconds", "error")


@dataclass(frozen=True)
class Variant:
    """A shape file whose parsed TOML document has some values changed.

    Attributes
    ----------
    path : Path
        The shape file (names it in messages, base of relative references).
    document : dict
        The parsed and changed document.
    """

    path: Path
    document: dict


@dataclass(frozen=True)
class Job:
    """One analysis of a batch.

    Attributes
    ----------
    label : str
    source : Profile, Path or Variant
    options : dict
        Keys from :data:`OPTION_KEYS`.  ``tol="auto"`` means: as
        ``soapfilm solve``, refine to the default tolerance unless a mesh
        size is known (option or the shape file's ``[mesh] size``), then
        solve once on that mesh.
    inputs : dict
        What distinguishes this job (the varied values, or the file), copied
        to the row.
    """

    label: str
    source: Profile | Path | Variant
    options: dict = field(default_factory=dict)
    inputs: dict = field(default_factory=dict)


def _as_job(item) -> Job:
    if isinstance(item, Job):
        job = item
    else:
        if not isinstance(item, (tuple, list)) or len(item) not in (2, 3):
            raise InputError(f"a job must be (label, profile-or-path, options), got {item!r}")
        label, source = item[0], item[1]
        options = dict(item[2]) if len(item) == 3 and item[2] else {}
        if isinstance(source, (str, os.PathLike)):
            source = Path(source)
        inputs = {"file": str(source)} if isinstance(source, Path) else {}
        job = Job(str(label), source, options, inputs)
    for key in job.options:
        if key not in OPTION_KEYS:
            from .shapes.registry import suggest

            raise InputError(f"unknown job option {key!r}", where=f"job {job.label!r}",
                             fix=suggest(key, OPTION_KEYS))
    return job


# --- one job ------------------------------------------------------------------
def _empty_row(job: Job) -> dict:
    row: dict = {"label": job.label, "inputs": dict(job.inputs), "units": None}
    row.update({k: None for k in QUANTITIES})
    row.update(elements=None, converged=None, warnings=0, warning_messages=[], seconds=None,
               error=None)
    return row


def _intake_options(options: Mapping):
    """The job's options as :class:`~soapfilm.intake.SectionOptions`.

    ``tol`` "auto" (or absent) means the default tolerance unless a mesh size
    is given; a float ``mesh_size`` is in the section's own unit.
    """
    from .intake import SectionOptions

    kw = {k: v for k, v in options.items() if k in OPTION_KEYS and v is not None}
    if kw.get("tol") == "auto":
        del kw["tol"]
    if isinstance(kw.get("mesh_size"), int | float):
        kw["mesh_size"] = repr(float(kw["mesh_size"]))  # bare: the section's unit
    return SectionOptions(**kw)


def _section(source, opts) -> tuple[Profile, dict]:
    """The profile of a job's source and the shape file's [mesh]/[solve] settings."""
    import dataclasses

    from .intake import read_input, scale_note
    from .readers.shapefile import shapefile_from_document

    if isinstance(source, Profile):
        return source, {}
    if isinstance(source, Variant):
        sf = shapefile_from_document(source.document, source.path, opts.units)
        note = scale_note(sf.profile)
        prof = sf.profile if not note else dataclasses.replace(
            sf.profile, notes=(*sf.profile.notes, note))
        return prof, dict(sf.settings)
    return read_input(Path(source), opts)


def _message(exc: BaseException) -> str:
    if isinstance(exc, SoapfilmError):
        return str(exc)
    return f"{type(exc).__name__}: {exc}" if str(exc) else type(exc).__name__


def run_job(job: Job) -> dict:
    """Analyse one job and return its row; never raises for a failing section.

    Any exception from reading, building, meshing or solving is caught and
    its message put in the row's ``error`` (the batch must go on); errors
    that are not soapfilm's own are logged with their traceback at DEBUG level.
    """
    from .intake import analyse_options
    from .solve import analyse

    row = _empty_row(job)
    start = time.perf_counter()
    try:
        opts = _intake_options(job.options)
        profile, settings = _section(job.source, opts)
        result = analyse(profile, **analyse_options(profile, settings, opts))
    except Exception as exc:  # noqa: BLE001 - isolation is the point
        if not isinstance(exc, SoapfilmError):
            log.debug("job %r failed", job.label, exc_info=True)
        row["error"] = _message(exc)
        row["seconds"] = time.perf_counter() - start
        return row
    lo, hi = result.torsion_constant_bounds
    j = result.torsion_constant
    row.update(
        units=result.units, J=j, J_lo=lo, J_hi=hi,
        tau_max_per_T=result.max_shear_per_torque, Wt=result.torsional_section_modulus,
        d_J=result.equivalent_diameter_stiffness, d_tau=result.equivalent_diameter_strength,
        area=result.area, Ip=result.polar_moment, J_per_Ip=j / result.polar_moment,
        elements=int(result.mesh.nelements), converged=result.converged,
        warnings=len(result.warnings), warning_messages=list(result.warnings),
        seconds=time.perf_counter() - start,
    )
    return row


# --- running many --------------------------------------------------------------
Progress = Callable[[int, int, dict], None]


def run_job_noting_reads(job: Job) -> tuple[dict, list[str]]:
    """:func:`run_job`, and the files it opened for reading (absolute paths).

    What a batch runs when its caller wants to know every file read, in
    whatever process the job runs (``files_read`` of :func:`run_batch`).
    """
    from .opened import files_opened

    with files_opened() as seen:
        row = run_job(job)
    return row, sorted(seen)


def _error_row(job: Job, exc: BaseException) -> dict:
    row = _empty_row(job)
    if isinstance(exc, cf.process.BrokenProcessPool):
        row["error"] = f"{_DIED} (out of memory, or a crash in a native library)"
    else:
        row["error"] = _message(exc)
    return row


#: numeric-library thread counts for worker processes: one process per core
#: already fills the machine, and extra threads only compete (measured in
#: notes/batch.md); variables the user set are left alone
_ONE_THREAD = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


@contextlib.contextmanager
def _worker_environment():
    """Environment the worker processes start with (restored afterwards)."""
    added = [k for k in _ONE_THREAD if k not in os.environ]
    os.environ.update({k: _ONE_THREAD[k] for k in added})
    try:
        yield
    finally:
        for k in added:
            os.environ.pop(k, None)


#: what a job imports (reading every kind of section, the adaptive solve), loaded
#: once in the fork server so that every worker starts with it: a worker importing
#: them itself spent 0.4-0.5 s of CPU on its first job (numpy and scipy's sparse
#: stack are in via soapfilm.solve; soapfilm.adapt brings scipy.spatial, the
#: quadratic elements scipy.special)
_WORKER_MODULES = (
    "soapfilm.batch", "soapfilm.solve", "soapfilm.adapt", "soapfilm.intake", "soapfilm.notices",
    "soapfilm.opened", "soapfilm.quiet", "soapfilm.resources", "soapfilm.fem.p1",
    "soapfilm.fem.p2", "soapfilm.readers", "soapfilm.shapes.basic", "soapfilm.shapes.shafts",
    "soapfilm.shapes.splines", "soapfilm.shapes.open_sections", "soapfilm.shapes.compose",
    "scipy.spatial", "scipy.special", "threadpoolctl", "tomllib",
)


def _pool_context():
    # a fresh server process forks the workers: no threads of the caller are copied;
    # it imports what the jobs need first (a module that fails to import is skipped)
    methods = multiprocessing.get_all_start_methods()
    if "forkserver" in methods:
        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload(list(_WORKER_MODULES))
        return ctx
    return multiprocessing.get_context("spawn")


#: what one job gives back to the caller of a batch: the row, the files it read
#: (absolute paths; empty unless asked for) and the notice texts of its warnings
Outcome = tuple[dict, list[str], list[str]]


def _work(job: Job, note_reads: bool = False, notices: bool = True) -> Outcome:
    """Run one job in whatever process: its row, the files it read, its notice texts.

    With ``notices`` the job's Python warnings and log records are captured
    as the command line's one-line notice texts (:func:`soapfilm.notices.captured`)
    instead of reaching this process's stderr raw, so that the caller can
    report them the way a single run does, wherever the job ran.
    """
    from .notices import captured
    from .opened import files_opened

    with contextlib.ExitStack() as stack:
        seen = stack.enter_context(files_opened()) if note_reads else set()
        texts = stack.enter_context(captured()) if notices else []
        row = run_job(job)
    return row, sorted(seen), list(texts)


def _failed(job: Job, exc: BaseException) -> Outcome:
    return _error_row(job, exc), [], []


def _collect(futures: list, jobs: list[Job], wait: Callable, progress: Progress | None
             ) -> list[Outcome]:
    """Outcomes in input order; a future that raises (worker died) gives an error row."""
    outcomes: list[Outcome | None] = [None] * len(jobs)

    def outcome(i: int) -> Outcome:
        try:
            return futures[i].result()
        except Exception as exc:  # noqa: BLE001 - e.g. a worker process killed
            log.debug("job %r: %s", jobs[i].label, _message(exc))
            return _failed(jobs[i], exc)

    if progress is not None:
        index = {id(f): i for i, f in enumerate(futures)}
        for done, f in enumerate(wait(futures), start=1):
            i = index[id(f)]
            outcomes[i] = outcome(i)
            progress(done, len(jobs), outcomes[i][0])
    return [o if o is not None else outcome(i) for i, o in enumerate(outcomes)]


def run_batch(
    jobs: Iterable,
    workers: int | None = None,
    executor: str | cf.Executor = "process",
    scheduler=None,
    progress: Progress | None = None,
    files_read: set | None = None,
    notices: bool = True,
) -> list[dict]:
    """Run many analyses and return one row per job, in input order.

    Parameters
    ----------
    jobs : iterable of Job or (label, source, options) tuples
        ``source`` is a Profile, a path (str or Path) or a :class:`Variant`;
        ``options`` a dict with keys from :data:`OPTION_KEYS` (may be left out).
    workers : int, optional
        Parallel processes (default ``os.cpu_count()``); 1 runs the jobs one
        after the other in this process.  For ``executor="dask"`` with a local
        cluster: the number of worker processes.
    executor : {"process", "serial", "dask"} or concurrent.futures.Executor
        Where the jobs run.  ``"dask"`` needs the optional ``dask[distributed]``
        (``pip install 'soapfilm[cluster]'``).
    scheduler : str or dask.distributed.Client, optional
        With ``executor="dask"``: a scheduler address (``tcp://host:port``),
        ``"local"`` or None for a local cluster on this machine, or a
        connected client.
    progress : callable, optional
        Called as ``progress(done, total, row)`` as jobs finish (any order).
    files_read : set, optional
        Filled with the absolute paths of the files the jobs opened for
        reading, in whatever process they ran (a shape file's drawing, say),
        so that the caller can refuse to write over any of them.
    notices : bool
        Capture each job's Python warnings (numpy's floating-point warnings)
        and log records in the process that runs it, as the one-line texts
        of the command line's notices (:mod:`soapfilm.notices`), and log them
        here once the batch is done, in input order, as WARNING records of
        ``soapfilm.batch``: ``LABEL: TEXT``.  ``soapfilm batch`` prints them
        as ``soapfilm: warning:`` lines whatever ``--jobs`` is.  False lets
        them through as they come (``--debug``).

    Returns
    -------
    list of dict
        See the module docstring for the keys.  A failed job has ``error``
        set and None for the numbers.

    Raises
    ------
    InputError
        A malformed job or option, an unknown executor, Dask asked for but
        not installed, or a scheduler that cannot be reached.
    """
    jobs = [_as_job(j) for j in jobs]
    if not jobs:
        return []
    task = functools.partial(_work, note_reads=files_read is not None, notices=notices)
    outcomes = _outcomes(jobs, task, workers, executor, scheduler, progress)
    rows = []
    for job, (row, read, texts) in zip(jobs, outcomes, strict=True):
        if files_read is not None:
            files_read.update(read)
        for text in texts:
            log.warning("%s: %s", job.label, text)
        rows.append(row)
    return rows


def _outcomes(jobs: list[Job], task: Callable, workers: int | None, executor, scheduler,
              progress: Progress | None) -> list[Outcome]:
    """Run the jobs where asked (see :func:`run_batch`); outcomes in input order."""
    if executor == "dask":
        return _run_dask(jobs, workers, scheduler, progress, task)
    if isinstance(executor, cf.Executor):
        futures = [executor.submit(task, j) for j in jobs]
        return _collect(futures, jobs, cf.as_completed, progress)
    if executor not in ("process", "serial"):
        raise InputError(f"unknown executor {executor!r}", fix="use 'process', 'serial' or 'dask'")
    n = (os.cpu_count() or 1) if workers is None else int(workers)
    if n < 1:
        raise InputError(f"the number of workers must be at least 1, got {n}", where="--jobs")
    n = min(n, _parallel_within_memory(jobs))
    if executor == "serial" or n == 1 or len(jobs) == 1:
        outcomes = []
        for done, job in enumerate(jobs, start=1):
            outcomes.append(task(job))
            if progress is not None:
                progress(done, len(jobs), outcomes[-1][0])
        return outcomes
    outcomes = _in_pool(jobs, min(n, len(jobs)), progress, task)
    # a worker that died (killed for memory, a crash in native code) breaks the whole
    # pool: run the jobs it took down again, each alone, so only the culprit fails
    lost = [i for i, (row, _, _) in enumerate(outcomes)
            if row.get("error", "") and row["error"].startswith(_DIED)]
    if lost:
        log.warning("a worker process died; running %d job(s) again one by one", len(lost))
    for i in lost:
        outcomes[i] = _in_pool([jobs[i]], 1, None, task)[0]
    return outcomes


def _parallel_within_memory(jobs: list[Job]) -> int:
    """Most workers whose memory budgets (one per section analysed) the machine holds.

    The budget guards one analysis (:mod:`soapfilm.resources`); running more
    of them at once than fit in memory would walk around it.  Fewer workers
    change only the time: every row is the same (README, "Repeatable results").
    """
    from .resources import memory_budget, physical_memory

    ram = physical_memory()
    if ram is None:
        return len(jobs)
    budget = max(memory_budget(j.options.get("memory")) for j in jobs)
    return max(1, int(ram // budget))


#: start of the error of a job whose worker process died
_DIED = "worker process died"


def _in_pool(jobs: list[Job], n: int, progress: Progress | None, task: Callable = _work
             ) -> list[Outcome]:
    pool = cf.ProcessPoolExecutor(max_workers=n, mp_context=_pool_context())
    try:
        with _worker_environment():  # the workers (and the fork server) start here
            futures = [pool.submit(task, j) for j in jobs]
        return _collect(futures, jobs, cf.as_completed, progress)
    except BaseException as exc:  # e.g. Ctrl-C: drop the jobs not yet started
        if not isinstance(exc, Exception):  # stopped (Ctrl-C, SIGTERM): the running ones too
            _stop_workers(pool)
        pool.shutdown(wait=False, cancel_futures=True)
        raise
    finally:
        pool.shutdown(wait=True)


def _stop_workers(pool: cf.ProcessPoolExecutor) -> None:
    """End the pool's worker processes now, rather than after their current jobs."""
    stop = getattr(pool, "terminate_workers", None)  # Python 3.14
    if stop is not None:
        stop()
        return
    for proc in list((getattr(pool, "_processes", None) or {}).values()):
        with contextlib.suppress(Exception):
            proc.terminate()


_ADDRESS = re.compile(r"^[a-z][a-z0-9+.-]*://\S+$")


def _run_dask(jobs: list[Job], workers: int | None, scheduler, progress,
              task: Callable = _work) -> list[Outcome]:
    try:
        from dask.distributed import Client, LocalCluster, as_completed
    except ImportError:
        raise InputError("running on Dask needs dask.distributed, which is not installed",
                         where="--scheduler", fix="pip install 'soapfilm[cluster]'") from None
    owned: list = []
    if isinstance(scheduler, Client):
        client = scheduler
    elif scheduler is None or scheduler == "local":
        cluster = LocalCluster(n_workers=workers or os.cpu_count() or 1, threads_per_worker=1,
                               processes=True, host="127.0.0.1", dashboard_address=None)
        client = Client(cluster)
        owned = [client, cluster]
    elif isinstance(scheduler, str) and _ADDRESS.match(scheduler):
        try:
            client = Client(scheduler, timeout="10s")
        except (OSError, TimeoutError) as exc:
            raise InputError(f"cannot reach the Dask scheduler ({_message(exc)})",
                             where=f"--scheduler {scheduler}",
                             fix="check the address and that the scheduler is running") from None
        owned = [client]
    else:
        raise InputError(f"not a scheduler address: {scheduler!r}", where="--scheduler",
                         fix="give e.g. tcp://10.0.0.5:8786, or 'local'")
    try:
        futures = client.map(task, jobs, pure=False)
        return _collect(futures, jobs, as_completed, progress)
    finally:
        for obj in owned:
            obj.close()


# --- sweeps -------------------------------------------------------------------
_INT = re.compile(r"^[+-]?\d+$")


def _number(text: str, where: str):
    text = text.strip()
    if _INT.match(text):
        return int(text)
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"{text!r} is not a number", where=where,
                         fix="give numbers like 12 or 12.5") from None
    if not math.isfinite(value):
        raise InputError(f"{text!r} is not a finite number", where=where)
    return value


def parse_values(text: str, where: str = "--vary") -> list:
    """Values of a sweep key: ``a,b,c`` (a list) or ``start:stop:count`` (evenly spaced).

    ``start:stop:count`` gives ``count`` values from ``start`` to ``stop``
    inclusive (``count`` a whole number >= 2, or 1 for ``start`` alone).
    Whole numbers stay integers in lists (``teeth=12,18,24``); evenly spaced
    values are floats unless all of them are whole numbers.

    Examples
    --------
    >>> parse_values("6:20:8")
    [6, 8, 10, 12, 14, 16, 18, 20]
    >>> parse_values("0.5,1,2.5")
    [0.5, 1, 2.5]
    """
    text = text.strip()
    if not text:
        raise InputError("no values", where=where, fix="give a,b,c or start:stop:count")
    if ":" in text:
        parts = text.split(":")
        if len(parts) != 3:
            raise InputError(f"{text!r} is not start:stop:count", where=where,
                             fix="give e.g. 6:20:8 (8 values from 6 to 20)")
        start, stop = (float(_number(p, where)) for p in parts[:2])
        count = _number(parts[2], where)
        if not isinstance(count, int) or count < 1:
            raise InputError(f"count {parts[2].strip()!r} must be a whole number >= 1", where=where,
                             fix="give e.g. 6:20:8 (8 values from 6 to 20)")
        from .resources import MAX_SWEEP_ROWS, check_count

        check_count("values", count, MAX_SWEEP_ROWS, where,
                    "a sweep has at most that many rows: give fewer values")
        if count == 1:
            values = [start]
        else:
            step = (stop - start) / (count - 1)
            values = [start + i * step for i in range(count - 1)] + [stop]
        values = [round(v, 12) for v in values]
        if all(float(v).is_integer() for v in values):
            values = [int(v) for v in values]
        return values
    return [_number(p, where) for p in text.split(",")]


def parse_vary(spec: str) -> tuple[str, list]:
    """Split ``KEY=VALUES`` (see :func:`parse_values`)."""
    where = f"--vary {spec}"
    key, sep, values = spec.partition("=")
    key = key.strip()
    if not sep or not key:
        raise InputError("expected KEY=VALUES", where=where,
                         fix="give e.g. --vary height=6:20:8 or --vary part2.diameter=30,40")
    return key, parse_values(values, where)


@dataclass(frozen=True)
class SweepPlan:
    """The combinations of a sweep, checked against the shape file.

    Attributes
    ----------
    path : Path
    document : dict
        The parsed shape file, unchanged.
    keys : tuple of str
        The varied keys as addressed (``height``, ``part2.diameter``).
    input_units : dict
        Key -> unit of its values (the file's length unit, ``deg`` or ``""``).
    combinations : tuple of tuple
        Cartesian product of the values, the last key varying fastest.
    """

    path: Path
    document: dict
    keys: tuple[str, ...]
    input_units: dict
    combinations: tuple[tuple, ...]

    def jobs(self, options: Mapping | None = None) -> list[Job]:
        """One :class:`Job` per combination."""
        out = []
        for combo in self.combinations:
            doc = copy.deepcopy(self.document)
            for key, value in zip(self.keys, combo, strict=True):
                _table_of(doc, key)[key.rpartition(".")[2]] = value
            label = " ".join(f"{k}={_fmt(v)}" for k, v in zip(self.keys, combo, strict=True))
            out.append(Job(label, Variant(self.path, doc), dict(options or {}),
                           dict(zip(self.keys, combo, strict=True))))
        return out


def _fmt(v) -> str:
    return f"{v:g}" if isinstance(v, float) else str(v)


def _table_of(doc: dict, key: str) -> dict:
    head, dot, _ = key.rpartition(".")
    if not dot or head == "section":
        return doc["section"]
    return doc["part"][int(head[4:]) - 1]


def _check_key(doc: dict, key: str, values: list, where: str, file_units: str) -> str:
    """Check that ``key`` can be varied with these values; return their unit."""
    from .readers.shapefile import SPECIAL_KINDS
    from .shapes.registry import KINDS, suggest

    head, dot, name = key.rpartition(".")
    parts = doc.get("part")
    if "section" in doc and isinstance(doc["section"], dict):
        if dot and head != "section":
            raise InputError(f"{key!r}: this file has one [section] table, no parts",
                             where=where, fix=f"write just {name!r}")
        table, at = doc["section"], "[section]"
    elif isinstance(parts, list) and parts:
        m = re.fullmatch(r"part(\d+)", head) if dot else None
        if m is None or not 1 <= int(m.group(1)) <= len(parts):
            raise InputError(f"{key!r} does not name a part of this file", where=where,
                             fix=f"address a key of [[part]] N as partN.{name} "
                                 f"(N = 1..{len(parts)})")
        table, at = parts[int(m.group(1)) - 1], f"[[part]] {m.group(1)}"
        if not isinstance(table, dict):
            raise InputError(f"{at} is not a table", where=where)
    else:
        raise InputError("the shape file has no [section] or [[part]] table to vary", where=where)
    kind = table.get("kind")
    if kind in KINDS:
        params = {p.name: p for p in KINDS[kind].params}
    elif kind in SPECIAL_KINDS:
        params = {}
    else:
        raise InputError(f"{at} has no known kind ({kind!r})", where=where,
                         fix="fix the shape file first ('soapfilm solve' names the problem)")
    allowed = list(params) + ["rotate"]
    if name not in allowed:
        raise InputError(f"unknown key {name!r} for kind {kind!r} in {at}", where=where,
                         fix=suggest(name, allowed))
    unit = params[name].unit if name in params else "angle"
    if unit == "choice":
        raise InputError(f"{name!r} is a choice of text, which --vary cannot sweep", where=where,
                         fix="make one shape file per choice")
    if unit == "count":
        bad = [v for v in values if not float(v).is_integer()]
        if bad:
            raise InputError(f"{name} takes whole numbers, got {_fmt(bad[0])}", where=where,
                             fix=f"give e.g. {name}=6,8,10")
        values[:] = [int(v) for v in values]
    return {"length": file_units, "angle": "deg"}.get(unit, "")


def plan_sweep(shape_file, vary: Mapping[str, Sequence] | Sequence[tuple[str, Sequence]],
               units: str | None = None) -> SweepPlan:
    """Check a sweep before any work: file, keys and values.

    Parameters
    ----------
    shape_file : path-like
        A ``.toml`` shape file.
    vary : mapping or sequence of (key, values)
        ``key`` is a dimension of the ``[section]`` table (``height``) or of
        ``[[part]]`` N (``part2.diameter``), or ``rotate``; values are numbers.
    units : str, optional
        Length unit if the file has no ``units`` key (default mm).

    Raises
    ------
    InputError
        Missing or unreadable file, unknown key (with a suggestion), a key
        given twice, values that are not numbers.
    """
    from .readers.shapefile import _load_toml

    path = Path(shape_file)
    if not path.is_file():
        raise InputError("file not found", where=str(path), fix="check the path")
    if path.suffix.lower() != ".toml":
        raise InputError("a sweep needs a shape file (.toml)", where=str(path),
                         fix="describe the section by kind and dimensions ('soapfilm shapes')")
    doc = _load_toml(path)
    items = list(vary.items()) if isinstance(vary, Mapping) else list(vary)
    if not items:
        raise InputError("nothing to vary", where=str(path), fix="give --vary KEY=VALUES")
    file_units = doc.get("units") if isinstance(doc.get("units"), str) else (units or "mm")
    keys, lists, input_units = [], [], {}
    for key, values in items:
        where = f"--vary {key}"
        if key in keys:
            raise InputError("key given twice", where=where, fix="list all its values in one --vary")
        values = list(values)
        if not values:
            raise InputError("no values", where=where)
        for v in values:
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                raise InputError(f"{v!r} is not a finite number", where=where)
        input_units[key] = _check_key(doc, key, values, where, file_units)
        keys.append(key)
        lists.append(values)
    from .resources import MAX_SWEEP_ROWS, check_count

    check_count("combinations to analyse", math.prod(len(v) for v in lists), MAX_SWEEP_ROWS,
                str(path), "give fewer values, or split the sweep into several runs")
    return SweepPlan(path, doc, tuple(keys), input_units, tuple(itertools.product(*lists)))


def sweep(shape_file, vary, options: Mapping | None = None, units: str | None = None,
          **run_options) -> list[dict]:
    """Analyse a shape file for every combination of the varied values.

    Parameters
    ----------
    shape_file, vary, units
        See :func:`plan_sweep`.
    options : dict, optional
        Job options (see :data:`OPTION_KEYS`) for every combination.
    **run_options
        ``workers``, ``executor``, ``scheduler``, ``progress`` of :func:`run_batch`.

    Returns
    -------
    list of dict
        One row per combination (the last key varying fastest); ``inputs``
        holds the combination.
    """
    opts = dict(options or {})
    if units is not None:
        opts.setdefault("units", units)
    plan = plan_sweep(shape_file, vary, units)
    return run_batch(plan.jobs(opts), **run_options)


# --- output -------------------------------------------------------------------
def output_unit(rows: Sequence[dict], preferred: str | None = None) -> str:
    """The unit to report in: ``preferred``, else the first successful row's, else mm."""
    if preferred:
        return preferred
    for row in rows:
        if row.get("units"):
            return row["units"]
    return "mm"


def rows_in_unit(rows: Sequence[dict], unit: str) -> list[dict]:
    """Copies of the rows with lengths converted to ``unit`` (inputs left as given)."""
    if unit not in LENGTH_UNITS:
        raise InputError(f"unknown length unit {unit!r}", fix=f"use one of {', '.join(LENGTH_UNITS)}")
    out = []
    for row in rows:
        row = dict(row)
        if row.get("units") and row["units"] != unit:
            factor = LENGTH_UNITS[row["units"]] / LENGTH_UNITS[unit]
            for key, (power, _, _) in QUANTITIES.items():
                if row.get(key) is not None:
                    row[key] = row[key] * factor**power
            row["units"] = unit
        out.append(row)
    return out


def _unit_suffix(power: int, unit: str) -> str:
    if power == 0:
        return ""
    if power > 0:
        return f"_{unit}" + (str(power) if power > 1 else "")
    return f"_per_{unit}" + (str(-power) if power < -1 else "")


def csv_columns(unit: str, input_keys: Sequence[str] = (), input_units: Mapping | None = None
                ) -> list[str]:
    """CSV header: label, inputs (with their unit), quantities (with ``unit``), the rest."""
    input_units = input_units or {}
    cols = ["label"]
    for key in input_keys:
        u = input_units.get(key, "")
        cols.append(f"{key}_{u}" if u else key)
    cols += [stem + _unit_suffix(power, unit) for power, stem, _ in QUANTITIES.values()]
    return cols + list(_OTHER)


def csv_text(rows: Sequence[dict], unit: str | None = None, input_units: Mapping | None = None
             ) -> str:
    """The rows as CSV text, converted to one length unit named in the header.

    Input columns come from the rows' ``inputs`` (keys in first-seen order);
    ``input_units`` maps an input key to its unit for the header.
    """
    unit = output_unit(rows, unit)
    rows = rows_in_unit(rows, unit)
    keys: list[str] = []
    for row in rows:
        keys += [k for k in row.get("inputs", {}) if k not in keys]
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(csv_columns(unit, keys, input_units))
    for row in rows:
        cells = [row["label"]] + [row["inputs"].get(k, "") for k in keys]
        cells += [_number_cell(row.get(k)) for k in QUANTITIES]
        cells += ["" if row.get(k) is None else row[k] for k in _OTHER[:2]]
        cells += [row.get("warnings", 0),
                  "" if row.get("seconds") is None else f"{row['seconds']:.3f}",
                  row.get("error") or ""]
        w.writerow(cells)
    return buf.getvalue()


def _number_cell(value) -> str:
    """A CSV cell: the number in full precision, empty when missing or not finite."""
    if value is None or not math.isfinite(value):
        return ""
    return repr(float(value))


def document(rows: Sequence[dict], unit: str | None = None, input_units: Mapping | None = None,
             **extra) -> dict:
    """JSON-ready document: unit, counts, the rows (converted) and the caution.

    What ``soapfilm batch --json`` and ``soapfilm sweep --json`` write; every
    key is described in README.md, section "JSON output", ``batch`` and
    ``sweep``.  ``extra`` (``command``, ``inputs`` or ``shape_file`` and
    ``vary``) follows ``units``; ``input_units`` (a sweep's key -> unit of its
    values) is added when given.  Numbers are finite or None (null).
    """
    unit = output_unit(rows, unit)
    rows = rows_in_unit(rows, unit)
    failed = sum(1 for r in rows if r.get("error"))
    out = {"units": unit, **extra}
    if input_units is not None:
        out["input_units"] = dict(input_units)
    out.update({"count": len(rows), "failed": failed,
                "quantities": {k: {"power_of_length": p, "meaning": m}
                               for k, (p, _, m) in QUANTITIES.items()},
                "rows": rows, "caution": CAUTION})
    return json_ready(out)
