"""Many logs checked at once: a folder, a glob or a list of files, in parallel on Dask.

:func:`check_logs` runs :func:`~posekit.analysis.trajectory.check_trajectory_csv` on every
file (CSV or Parquet, same options for all) and returns **one table of findings** (a pandas
DataFrame, columns :data:`FLEET_COLUMNS`): for each file one row per finding of
:data:`~posekit.analysis.trajectory.FINDINGS` plus one row ``rejected`` (rows that named no
rotation), with how many rows were flagged, in how many spans, and the first and last
flagged row and time; and the file's ``status``: ``"clean"`` (nothing flagged, nothing
rejected), ``"findings"`` or ``"failed"``.  A file that cannot be read or checked is one row
with status ``"failed"``, its error's class in ``error_type`` (``"LogReadError"``) and its
message in ``error``; the other files still finish.  Rows come in the order of the files, whatever order they finish
in, so a run on Dask equals the serial run exactly.

Where the work runs (``scheduler=``):

- ``"auto"`` (default): Dask's local scheduler with threads when dask is installed (nothing
  to start), else the plain loop; ``df.attrs["scheduler"]`` says which ran.  Threads, not
  processes: the reading (pyarrow) and the scan (numpy, posekit's compiled loops) release
  the GIL, and worker processes would each pay for starting Python and importing numpy,
  scipy and pyarrow (``benchmarks/bench_fleet.py`` measures both).  While a threaded run
  lasts, each file is read on its worker's thread rather than on pyarrow's pool, and
  posekit's compiled loops do not split it further (the files are the parallel unit);
  pyarrow's own settings are not touched;
- ``"threads"`` or ``"processes"``: that local Dask scheduler, ``workers`` of them (default:
  the number of processors);
- ``"serial"``: one file after another in this thread, without Dask;
- ``address="tcp://host:8786"``: a running Dask cluster, through ``dask.distributed.Client``
  (needs the optional package ``distributed`` there and here, and posekit on the workers).

``progress=None`` shows Dask's progress bar on standard error when it is a terminal and the
work takes longer than a second; ``True`` / ``False`` force it on or off.

Needs pandas (the table) and, for parallel runs, dask: ``pip install "posekit[logs]"``; a
missing one raises :class:`~posekit.io.logs.MissingPackageError` naming the extra.
"""

from __future__ import annotations

import contextlib
import glob
import os
import sys
import time

from ..core.errors import PoseInputError, excerpt, plural, summarise
from ..io.limits import LOG_LIMIT
from ..core import compiled
from ..io.logs import MissingPackageError, TrajectoryInputError, reads_on_caller
from .trajectory import _CHECK_OPTIONS, check_trajectory_csv

__all__ = ["check_logs", "find_logs", "FLEET_COLUMNS", "LOG_SUFFIXES", "SCHEDULERS", "NoLogsFoundError",
           "ClusterError"]

#: Columns of the table :func:`check_logs` returns.
FLEET_COLUMNS = ("file", "status", "finding", "checked", "rows", "spans", "first_row", "first_time", "last_row",
                 "last_time", "log_rows", "used", "kind", "detail", "error_type", "error")
#: File names a folder is searched for (case does not matter).
LOG_SUFFIXES = (".csv", ".tsv", ".txt", ".parquet", ".pq")
#: Where :func:`check_logs` can run the work.
SCHEDULERS = ("auto", "threads", "processes", "serial")


class NoLogsFoundError(TrajectoryInputError):
    """A folder or glob that names no log file, or an empty list of files."""


class ClusterError(PoseInputError):
    """The Dask cluster at the given address cannot be reached or used."""


def find_logs(sources) -> list[str]:
    """The files ``sources`` names, in order, each once: a file, a folder, a glob, or a list of these.

    A folder gives the files directly inside it whose names end in :data:`LOG_SUFFIXES`
    (sorted; use a glob such as ``"logs/**/*.csv"`` to go deeper); a glob (``*``, ``?``,
    ``[``) gives its matches, sorted; any other path is taken as a file as given (a
    missing one is then reported as a failed file).  Raises :class:`NoLogsFoundError` when
    nothing is named.

    >>> find_logs([])  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    posekit.analysis.fleet.NoLogsFoundError: no logs given (an empty list); accepted: a file, a folder holding ...
    """
    accepted = (f"accepted: a file, a folder holding {', '.join(LOG_SUFFIXES[:-1])} or {LOG_SUFFIXES[-1]} files, "
                "a glob such as 'logs/*.csv', or a list of these")
    if isinstance(sources, (str, os.PathLike)):
        sources = [sources]
    elif not isinstance(sources, (list, tuple)):
        raise TrajectoryInputError(f"sources: got {type(sources).__name__} {summarise(sources, 40)}; {accepted}")
    if not sources:
        raise NoLogsFoundError(f"no logs given (an empty list); {accepted}")
    found: list[str] = []
    for source in sources:
        if not isinstance(source, (str, os.PathLike)):
            raise TrajectoryInputError(f"sources: got {type(source).__name__} {summarise(source, 40)} in the list; "
                                       f"{accepted}")
        text = os.fspath(source)
        if os.path.isdir(text):
            names = sorted(os.path.join(text, n) for n in os.listdir(text)
                           if n.lower().endswith(LOG_SUFFIXES) and os.path.isfile(os.path.join(text, n)))
            if not names:
                raise NoLogsFoundError(f"folder {excerpt(text, 80)} holds no log files; {accepted}")
        elif glob.has_magic(text):
            names = sorted(n for n in glob.glob(text, recursive=True) if os.path.isfile(n))
            if not names:
                raise NoLogsFoundError(f"no file matches {excerpt(text, 80)}; {accepted}")
        else:
            names = [text]
        found.extend(names)
    return list(dict.fromkeys(found))


def _pandas():
    try:
        import pandas
    except ImportError:
        raise MissingPackageError("the table of findings needs the optional package pandas, which is not installed "
                                  "here; accepted: install it with pip install \"posekit[logs]\"") from None
    return pandas


def _have(name: str) -> bool:
    import importlib.util

    try:
        return importlib.util.find_spec(name) is not None
    except (ImportError, ValueError):
        return False


def _rows_of(path: str, options: dict) -> list[dict]:
    """The table rows of one file: one per finding and one for rejected rows, or one ``failed`` row."""
    base = {"file": path}
    try:
        report = check_trajectory_csv(path, **options)
    except Exception as exc:  # noqa: BLE001 - a file that fails is reported by name; the others go on
        return [{**base, "status": "failed", "error_type": type(exc).__name__, "error": str(exc)}]
    rows = []
    for name, f in report.findings.items():
        rows.append({**base, "finding": name, "checked": f.checked, "rows": f.count, "spans": int(f.span_first.size),
                     "first_row": int(f.rows[0]) if f.count else None,
                     "first_time": float(report.times[f.rows[0]]) if f.count else None,
                     "last_row": int(f.rows[-1]) if f.count else None,
                     "last_time": float(report.times[f.rows[-1]]) if f.count else None, "detail": f.words()})
    rej = report.rejected
    rejected_rows = [r.row for r in rej]
    rows.append({**base, "finding": "rejected", "checked": True, "rows": len(rej),
                 "spans": int(sum(1 for i, r in enumerate(rejected_rows) if i == 0 or r != rejected_rows[i - 1] + 1)),
                 "first_row": rej[0].row if rej else None, "first_time": None,
                 "last_row": rej[-1].row if rej else None, "last_time": None,
                 "detail": (f"{plural(len(rej), 'row')} rejected; first: {rej[0].words()}" if rej
                            else "rejected: none")})
    flagged = any(r["rows"] for r in rows)
    used = int(report.used.sum())
    for r in rows:
        r.update(status="findings" if flagged else "clean", log_rows=report.rows, used=used, kind=report.kind)
    return rows


def _table(per_file: list[list[dict]]):
    pd = _pandas()
    records = [row for rows in per_file for row in rows]
    df = pd.DataFrame.from_records(records, columns=list(FLEET_COLUMNS))
    for column in ("rows", "spans", "first_row", "last_row", "log_rows", "used"):
        df[column] = df[column].astype("Int64")
    for column in ("first_time", "last_time"):
        df[column] = df[column].astype("float64")
    df["checked"] = df["checked"].astype("boolean")
    for column in ("file", "status", "finding", "kind", "detail", "error_type", "error"):
        df[column] = df[column].astype("object").where(df[column].notna(), None)
    return df


def _check_options(scheduler, workers, address, progress, checks):
    unknown = set(checks) - _CHECK_OPTIONS
    if unknown:
        raise TrajectoryInputError(f"unknown option(s) {sorted(unknown)}; accepted: "
                                   f"{', '.join(sorted(_CHECK_OPTIONS))}")
    if scheduler not in SCHEDULERS:
        raise TrajectoryInputError(f"scheduler: got {summarise(scheduler, 40)}; accepted: "
                                   f"{', '.join(map(repr, SCHEDULERS))}")
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int) or workers < 1):
        raise TrajectoryInputError(f"workers: got {summarise(workers, 40)}; accepted: a whole number >= 1, or None "
                                   "for the number of processors")
    if address is not None:
        if not isinstance(address, str) or not address.strip():
            raise TrajectoryInputError(f"address: got {summarise(address, 40)}; accepted: a Dask scheduler address "
                                       "such as 'tcp://10.0.0.5:8786'")
        if scheduler not in ("auto",):
            raise TrajectoryInputError(f"address and scheduler={scheduler!r} both given; accepted: one of them "
                                       "(a cluster address runs the work on that cluster)")
    if progress not in (None, True, False):
        raise TrajectoryInputError(f"progress: got {summarise(progress, 40)}; accepted: True, False or None "
                                   "(shown when standard error is a terminal)")


def check_logs(sources, *, kind: str | None = None, convention=None, time_column=None, value_columns=None,
               delimiter: str | None = None, comment: str | None = "#", limit: int = LOG_LIMIT,
               reader: str = "auto", scheduler: str = "auto", workers: int | None = None,
               address: str | None = None, progress: bool | None = None, **checks):
    """Check every log ``sources`` names (see :func:`find_logs`) -> one pandas DataFrame of findings.

    Reading options (``kind`` ... ``reader``) and ``checks`` (``rate_limit``, ``gap_limit``,
    ...) are those of :func:`~posekit.analysis.trajectory.check_trajectory_csv`, the same
    for every file.  ``scheduler``, ``workers``, ``address`` and ``progress``: where and
    how the work runs (module docstring).  Columns: :data:`FLEET_COLUMNS`; per file 10
    rows (the 9 findings and ``rejected``) with its ``status``, or one ``failed`` row with
    its ``error_type`` and ``error``.  ``df.attrs``: ``scheduler`` (what ran), ``files``, ``seconds``.

    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "a.csv").write_text("time,qw,qx,qy,qz\\n0,1,0,0,0\\n1,-1,0,0,0\\n")
    >>> _ = (folder / "b.csv").write_text("time,qw\\n0,1\\n")
    >>> df = check_logs(folder, scheduler="serial")
    >>> df.groupby("file", sort=False)["status"].first().tolist()
    ['findings', 'failed']
    >>> df.loc[df["finding"] == "quaternion_sign_flips", ["rows", "first_row", "first_time"]].values.tolist()
    [[1, 1, 1.0]]
    >>> df.loc[df["status"] == "failed", "error_type"].tolist()
    ['MissingColumnError']
    """
    _check_options(scheduler, workers, address, progress, checks)
    _pandas()
    files = find_logs(sources)
    options = dict(kind=kind, convention=convention, time_column=time_column, value_columns=value_columns,
                   delimiter=delimiter, comment=comment, limit=limit, reader=reader, **checks)
    started = time.perf_counter()
    if address is not None:
        per_file, ran = _on_cluster(files, options, address, progress)
    elif scheduler == "serial" or (scheduler == "auto" and not _have("dask")):
        per_file = [_rows_of(f, options) for f in files]
        ran = "serial" + ("" if scheduler == "serial" else " (dask is not installed)")
    else:
        per_file, ran = _on_local_dask(files, options, "threads" if scheduler == "auto" else scheduler, workers,
                                       progress)
    df = _table(per_file)
    df.attrs.update(scheduler=ran, files=len(files), seconds=time.perf_counter() - started)
    return df


def _show_progress(progress) -> bool:
    if progress is None:
        return bool(getattr(sys.stderr, "isatty", lambda: False)())
    return progress


def _on_local_dask(files, options, scheduler, workers, progress):
    try:
        import dask
        from dask.diagnostics import ProgressBar
    except ImportError:
        raise MissingPackageError(f"scheduler={scheduler!r} needs the optional package dask, which is not installed "
                                  "here; accepted: install it with pip install \"posekit[logs]\", or pass "
                                  "scheduler='serial'") from None
    count = workers or os.cpu_count() or 1
    tasks = [dask.delayed(_rows_of, pure=False)(f, options) for f in files]
    with _files_as_parallel_unit(scheduler == "threads" and count > 1):
        if _show_progress(progress):
            with ProgressBar(minimum=1.0, out=sys.stderr):
                per_file = dask.compute(*tasks, scheduler=scheduler, num_workers=count)
        else:
            per_file = dask.compute(*tasks, scheduler=scheduler, num_workers=count)
    return list(per_file), f"dask {scheduler}, {count} worker{'s' if count > 1 else ''}"


@contextlib.contextmanager
def _files_as_parallel_unit(wanted: bool):
    """While files are read side by side in threads, each file is read and scanned on its own thread:
    pyarrow reads on the calling thread and posekit's compiled loops do not split (both restored after).

    The files are the parallel unit then.  pyarrow's pool is one per process, so reads sent to it
    from two threads wait for each other: the reading phase of 20 logs took 0.74-0.82 s on two
    threads against 0.84-1.0 s on one, and 0.49-0.52 s on the calling threads
    (``benchmarks/bench_fleet.py`` prints the whole run's figures).
    """
    if not wanted:
        yield
        return
    with reads_on_caller(), compiled.threads(1):
        yield


def _on_cluster(files, options, address, progress):
    try:
        from dask.distributed import Client, progress as cluster_progress
    except ImportError:
        raise MissingPackageError("a cluster address needs the optional package distributed (Dask's cluster "
                                  "scheduler), which is not installed here; accepted: install it with pip install "
                                  "distributed (the same version as on the cluster), or leave address out to use "
                                  "this machine's processors") from None
    import dask

    try:
        client = Client(address, timeout="10s", set_as_default=False)
    except (OSError, TimeoutError, ValueError) as exc:
        raise ClusterError(f"the Dask cluster at {excerpt(address, 80)} cannot be reached ({excerpt(str(exc), 200)}); "
                           "accepted: the address of a running Dask scheduler, e.g. 'tcp://10.0.0.5:8786'") from None
    try:
        futures = client.compute([dask.delayed(_rows_of, pure=False)(f, options) for f in files])
        if _show_progress(progress):
            cluster_progress(futures)
        per_file = client.gather(futures)
        workers = len(client.scheduler_info().get("workers", {}))
    finally:
        client.close()
    return list(per_file), f"dask cluster {address}, {workers} worker{'s' if workers != 1 else ''}"
