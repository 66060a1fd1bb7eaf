"""Many surveys at once: ``envelope portfolio`` on Dask (edge: file system and cluster).

A housing programme hands over many survey folders; each is one task
(`envelope.portfolio_house.run_house`) on ``dask.distributed``: by default a local cluster of
worker processes (one thread each, as many as cores), or an existing cluster by scheduler
address. Each house gets its own output folder ``OUT/<house id>``, written exactly as
``envelope assess`` writes it (staged, moved into place whole, manifest), plus ``inputs.json``;
a house whose inputs and tool version match its existing outputs is skipped, so an
interrupted run resumes where it stopped. A survey that fails is listed and the others go on.

At the end ``OUT/portfolio/`` holds the portfolio table (``portfolio.parquet``,
``portfolio.csv``: one row per house, ranked risk first, then savings), the portfolio pages
(``index.html`` and the same table sorted by other columns) and their charts (PNG).

Houses are given as survey folders, as parent folders whose sub-folders are surveys (the
sub-folder name is the house id), or as a CSV list with columns ``house_id`` and ``survey``
(paths relative to the CSV). House ids follow the rules of survey identifiers (ASCII letters,
digits, ``-``, ``_``, ``.``, not starting with ``.``); ``portfolio`` is reserved.
"""

from __future__ import annotations

import contextlib
import csv
import dataclasses
import io
import logging
import os
import time
import uuid
from collections.abc import Callable
from pathlib import Path

from .errors import SurveyError
from .portfolio_house import HouseOutcome, HouseTask, run_house

__all__ = [
    "TABLE_FOLDER",
    "WORKER_CONFIG",
    "Entry",
    "HouseProgress",
    "PortfolioRun",
    "collect_entries",
    "rank_houses",
    "run_portfolio",
    "write_table",
]

TABLE_FOLDER = "portfolio"
"""Sub-folder of ``--out`` with the portfolio table and pages (a reserved house id)."""
TABLE_COMMAND = "portfolio-table"
MAX_LIST_BYTES = 16 * 1024 * 1024
MAX_HOUSES = 1_000_000
LIST_COLUMNS = ("house_id", "survey")
WORKER_CONFIG = {
    # the statistical profiler samples the task's stack every 10 ms: a survey is deep
    # pure-Python drawing code, and the sampling cost it about a tenth of its CPU time
    "distributed.worker.profile.enabled": False,
    # Dask's default (glibc trims freed memory above 64 KiB back to the system) made a
    # survey's many short-lived image arrays cost about a fifth more CPU time; unset, glibc
    # keeps its own threshold (memory is still bounded by the worker's memory limit)
    "distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_": None,
}
"""Dask settings of the local cluster's workers (see docs/cluster.md for a cluster of your own)."""


@dataclasses.dataclass(frozen=True)
class Entry:
    """One house: its id and its survey folder (or ``.toml`` file), absolute."""

    house_id: str
    survey: Path
    given: str
    """Where it came from, for messages (a path, or ``list.csv, row 4``)."""


# --------------------------------------------------------------------------------------
# which houses
# --------------------------------------------------------------------------------------


def _check_id(house_id: str, file, field: str) -> str:
    from .tomltable import check_identifier

    why = check_identifier(house_id)
    if why:
        raise SurveyError(f"not a valid house id: {why}", file, field)
    if house_id.lower() == TABLE_FOLDER:
        raise SurveyError(f"'{TABLE_FOLDER}' is reserved for the portfolio table; choose "
                          "another house id", file, field)
    return house_id


def _is_survey(folder: Path) -> bool:
    return (folder / "survey.toml").is_file()


def _from_path(p: Path) -> list[Entry]:
    given = str(p)
    if not os.path.exists(p):
        raise SurveyError("not found; expected a survey folder, a folder of survey folders "
                          "or a .toml file", given, "SURVEYS")
    real = p.resolve()
    if real.is_file():
        if real.suffix.lower() != ".toml":
            raise SurveyError("expected a survey folder, a folder of survey folders or a "
                              ".toml file (use --list for a CSV list)", given, "SURVEYS")
        return [Entry(_check_id(real.parent.name, given, "house id (the folder name)"),
                      real, given)]
    if _is_survey(real):
        return [Entry(_check_id(real.name, given, "house id (the folder name)"), real, given)]
    found = []
    with os.scandir(real) as it:
        subs = sorted((e for e in it if e.is_dir() and not e.name.startswith(".")),
                      key=lambda e: e.name)
    for e in subs:
        sub = Path(e.path)
        if _is_survey(sub):
            found.append(Entry(_check_id(e.name, str(sub), "house id (the folder name)"),
                               sub.resolve(), str(sub)))
    if not found:
        raise SurveyError("holds no survey.toml and no sub-folder with one", given, "SURVEYS")
    return found


def _from_list(path: Path) -> list[Entry]:
    """Entries of a CSV list (UTF-8, comma-separated, a header naming ``house_id`` and
    ``survey``); survey paths relative to the list's folder."""
    given = str(path)
    try:
        size = os.path.getsize(path)
        if size > MAX_LIST_BYTES:
            raise SurveyError(f"larger than {MAX_LIST_BYTES // 2**20} MB; split the list",
                              given, "--list")
        data = Path(path).read_bytes()
    except OSError as exc:
        from .faults import os_error_to_survey_error

        raise os_error_to_survey_error(exc, "read", given, "--list") from None
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise SurveyError(f"not UTF-8 text (at byte {exc.start}); save the list as UTF-8 CSV",
                          given, "--list") from None
    if "\x00" in text:
        raise SurveyError("holds a NUL character; not a CSV text file", given, "--list")
    rows = csv.reader(io.StringIO(text, newline=""))
    header = next(rows, None)
    names = [h.strip() for h in header] if header else []
    missing = [c for c in LIST_COLUMNS if c not in names]
    if missing:
        raise SurveyError(f"expected a header row with the columns {', '.join(LIST_COLUMNS)}; "
                          f"missing {', '.join(missing)}", given, "header")
    i_id, i_sv = names.index("house_id"), names.index("survey")
    base = Path(path).resolve().parent
    out = []
    for n, row in enumerate(rows, start=2):
        if not any(cell.strip() for cell in row):
            continue
        if len(out) >= MAX_HOUSES:
            raise SurveyError(f"more than {MAX_HOUSES} houses; split the list", given, "--list")
        if len(row) <= max(i_id, i_sv):
            raise SurveyError(f"expected {len(names)} cells, got {len(row)}", given, f"row {n}")
        hid = _check_id(row[i_id].strip(), given, f"row {n}: house_id")
        rel = row[i_sv].strip()
        if not rel or "\x00" in rel:
            raise SurveyError("expected the path of a survey folder", given, f"row {n}: survey")
        sp = Path(rel).expanduser()
        sp = sp if sp.is_absolute() else base / sp
        if not os.path.exists(sp):
            raise SurveyError(f"survey not found: {rel[:120]}", given, f"row {n}: survey")
        out.append(Entry(hid, sp.resolve(), f"{given}, row {n}"))
    if not out:
        raise SurveyError("lists no house", given, "--list")
    return out


def collect_entries(paths=(), list_file: str | Path | None = None) -> list[Entry]:
    """The houses of a run from survey paths, parent folders and a CSV list.

    Raises
    ------
    SurveyError
        A path not found, a house id that breaks the identifier rules or is used twice
        (letter case ignored: file systems may ignore it), a malformed list; naming the
        file or list row.
    """
    entries: list[Entry] = []
    for p in paths:
        entries.extend(_from_path(Path(p)))
    if list_file is not None:
        entries.extend(_from_list(Path(list_file)))
    if not entries:
        raise SurveyError("no survey given; name survey folders, a folder of them, or --list",
                          None, "SURVEYS")
    seen: dict[str, Entry] = {}
    for e in entries:
        key = e.house_id.lower()
        if key in seen:
            raise SurveyError(f"house id '{e.house_id}' is used twice (also by "
                              f"{seen[key].given}); each house needs its own id",
                              e.given, "house id")
        seen[key] = e
    return entries


# --------------------------------------------------------------------------------------
# the cluster
# --------------------------------------------------------------------------------------


@contextlib.contextmanager
def _sigint_ignored():
    """Ignore SIGINT while the local workers start, so that they inherit "ignored": Ctrl-C
    in the terminal reaches every process of the group, and only this one should act on it
    (it stops the cluster, which stops the workers). Python keeps an inherited "ignored"."""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        yield
        return
    old = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, old)


def _worker_version() -> str:
    from envelope import __version__

    return __version__


@contextlib.contextmanager
def _client(scheduler: str | None, workers: int | None):
    """A Dask client: to `scheduler`, or to a new local cluster of `workers` processes with
    one thread each (default: one per core). Yields ``(client, description)``."""
    from distributed import Client, LocalCluster

    from . import __version__

    if scheduler:
        try:
            client = Client(scheduler, timeout="20s", set_as_default=False)
        except (OSError, TimeoutError, ValueError) as exc:
            raise SurveyError(f"cannot reach the Dask scheduler ({type(exc).__name__}); check "
                              "the address (e.g. tcp://host:8786) and that it runs",
                              scheduler, "--scheduler") from None
        with client:
            try:
                versions = client.run(_worker_version)
            except Exception as exc:  # noqa: BLE001 - any failure here is the workers' setup
                raise SurveyError(f"the workers cannot import envelope ({type(exc).__name__}); "
                                  f"install envelope {__version__} on every worker",
                                  scheduler, "--scheduler") from None
            if not versions:
                raise SurveyError("the cluster has no workers; start some with "
                                  "`dask worker ADDRESS`", scheduler, "--scheduler")
            other = sorted({v for v in versions.values() if v != __version__})
            if other:
                raise SurveyError(f"workers run envelope {', '.join(other)}, this is "
                                  f"{__version__}; install the same version everywhere",
                                  scheduler, "--scheduler")
            yield client, f"{len(versions)} workers at {scheduler}"
        return
    import dask

    n = workers or os.cpu_count() or 1
    try:
        with dask.config.set(WORKER_CONFIG), _sigint_ignored():
            cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                                   dashboard_address=None, silence_logs=logging.ERROR)
    except (OSError, RuntimeError, TimeoutError) as exc:
        raise SurveyError(f"could not start a local cluster of {n} worker processes "
                          f"({type(exc).__name__}); from a Python script, call run_portfolio "
                          "under `if __name__ == \"__main__\":` (workers are new processes)",
                          None, "--workers") from None
    with cluster, Client(cluster, set_as_default=False) as client:
        limits = [w.get("memory_limit") for w in client.scheduler_info()["workers"].values()]
        desc = f"local cluster of {n} worker processes, 1 thread each"
        if limits and limits[0]:
            desc += f", memory limit {limits[0] / 2**30:.1f} GiB each"
        yield client, desc


def _lost(task: HouseTask, exc: BaseException) -> HouseOutcome:
    name = type(exc).__name__
    if name == "KilledWorker":
        why = ("the worker running it died (out of memory, or killed); nothing written for "
               "this house")
    else:
        why = f"the cluster lost this task ({name}); nothing written for this house"
    return HouseOutcome(task.house_id, task.survey, "failed", why)


# --------------------------------------------------------------------------------------
# the run
# --------------------------------------------------------------------------------------


@dataclasses.dataclass
class PortfolioRun:
    """What a portfolio run did: one outcome per house, in the order given."""

    outcomes: list[HouseOutcome]
    table: object
    """The ranked table (pandas DataFrame), as written."""
    folder: Path
    """``OUT/portfolio``."""
    cluster: str
    wall_s: float
    peak_rss_mb_per_worker: dict[str, float]
    """Peak resident memory [MB] of each worker process that ran a house, by ``host:pid``."""

    @property
    def failed(self) -> list[HouseOutcome]:
        """Houses that failed, or were assessed with some thermograms failed."""
        return [o for o in self.outcomes if o.state == "failed"
                or (o.row is not None and o.row.get("failed_views"))]


def run_portfolio(entries, out: str | Path, *, scheduler: str | None = None,
                  workers: int | None = None, draws: int | None = None,
                  convection: str | None = None, replace: bool = False,
                  progress: Callable[[HouseOutcome], None] | None = None,
                  hold=None, notes: list | None = None) -> PortfolioRun:
    """Assess every house on Dask and write the portfolio table and pages.

    Parameters
    ----------
    entries : sequence of Entry
        From `collect_entries`.
    out : path
        Root of the output folders (``OUT/<house id>``, ``OUT/portfolio``); apart from every
        survey folder. On a cluster: a path that every worker sees (shared storage).
    scheduler : str, optional
        Address of an existing Dask scheduler; default a local cluster.
    workers : int, optional
        Worker processes of the local cluster (default: one per core).
    draws, convection : optional
        Overrides of the surveys' ``analysis.monte_carlo_draws`` and
        ``analysis.interior_convection`` (part of what makes a house up to date).
    replace : bool
        Also replace house folders written by ``envelope assess`` (never foreign folders).
    progress : callable, optional
        Called with each `HouseOutcome` as it arrives.
    hold, notes
        As for `envelope.folders.staged_folder` (signals deferred over the final rename;
        lines for the user).

    Returns
    -------
    PortfolioRun
    """
    from .folders import _real, check_apart

    t0 = time.perf_counter()
    given = Path(out)
    root = _real(given, given)
    check_apart(root, [e.survey if e.survey.is_dir() else e.survey.parent for e in entries],
                given)
    tasks = [HouseTask(e.house_id, str(e.survey), str(root / e.house_id), draws, convection,
                       replace) for e in entries]
    by_key: dict[str, HouseOutcome] = {}
    with _client(scheduler, workers) as (client, desc), client.as_current():
        from distributed import as_completed

        run_id = uuid.uuid4().hex[:8]
        futures = {client.submit(run_house, t, key=f"envelope-{t.house_id}-{run_id}",
                                 pure=False): t for t in tasks}
        try:
            for fut in as_completed(futures):
                task = futures[fut]
                try:
                    outcome = fut.result()
                except Exception as exc:  # noqa: BLE001 - a lost task fails its house only
                    outcome = _lost(task, exc)
                by_key[task.house_id] = outcome
                if progress:
                    progress(outcome)
        finally:
            pending = [f for f in futures if not f.done()]
            if pending:
                with contextlib.suppress(Exception):
                    client.cancel(pending)
    outcomes = [by_key[t.house_id] for t in tasks]
    peaks: dict[str, float] = {}
    for o in outcomes:
        if o.worker:
            peaks[o.worker] = max(peaks.get(o.worker, 0.0), o.peak_rss_mb)
    table = rank_houses(outcomes)
    folder = root / TABLE_FOLDER
    write_table(table, folder, [e.survey for e in entries], hold=hold, notes=notes)
    return PortfolioRun(outcomes, table, folder, desc, time.perf_counter() - t0, peaks)


class HouseProgress:
    """The progress bar over houses on stderr, with the time left (silent when quiet); call
    it with each `HouseOutcome`."""

    def __init__(self, total: int, quiet: bool):
        from .terminal import ProgressBar

        self.failed = 0
        self.bar = ProgressBar(total, quiet, "houses", time_left=True)

    def __enter__(self):
        self.bar.__enter__()
        return self

    def __exit__(self, *exc):
        self.bar.__exit__(*exc)

    def __call__(self, outcome) -> None:
        self.failed += outcome.state == "failed"
        self.bar.advance(f"houses ({self.failed} failed)" if self.failed else "houses")


# --------------------------------------------------------------------------------------
# the table
# --------------------------------------------------------------------------------------

_RISK_RANK = {"condensation": 3, "mould": 2, "not assessed": 1, "none": 0}


def rank_houses(outcomes):
    """The portfolio table: one row per house, ranked risk first, then savings.

    Order: worst risk (condensation, mould, not assessed, none), then the annual energy
    saved by the house's best measure (largest first; none proposed last), then H per m² of
    envelope (largest first), then the house id. Failed houses come last, unranked, with
    their error.

    Returns
    -------
    pandas.DataFrame
        Columns ``rank``, ``house_id``, ``state``, the numbers of
        `envelope.portfolio_house.house_row`, ``error`` and ``warnings``.
    """
    import math

    import pandas as pd

    rows = []
    for o in outcomes:
        row = {"house_id": o.house_id, "state": o.state, **(o.row or {"survey": o.survey})}
        row["error"] = o.error
        row["warnings"] = "; ".join(o.warnings)
        rows.append(row)

    def num(v):
        return v if isinstance(v, int | float) and math.isfinite(v) else None

    def key(r):
        if r["state"] == "failed":
            return (1, 0, 0.0, 0.0, r["house_id"])
        saved = num(r.get("best_measure_annual_kwh_saved"))
        per_m2 = num(r.get("h_per_envelope_m2_w_m2k"))
        return (0, -_RISK_RANK.get(r.get("worst_risk"), 1),
                -(saved if saved is not None else -math.inf),
                -(per_m2 if per_m2 is not None else -math.inf), r["house_id"])

    rows.sort(key=key)
    rank = 0
    for r in rows:
        if r["state"] != "failed":
            rank += 1
            r["rank"] = rank
        else:
            r["rank"] = None
    frame = pd.DataFrame(rows)
    from .portfolio_page import TABLE_COLUMNS

    for col in TABLE_COLUMNS:
        if col not in frame.columns:
            frame[col] = None
    frame = frame[list(TABLE_COLUMNS)]
    frame["rank"] = frame["rank"].astype("Int64")
    for col in frame.columns:
        if col.startswith("defects_") or col == "failed_views":
            frame[col] = frame[col].astype("Int64")
    return frame


def write_table(table, folder: Path, surveys=(), hold=None, notes=None) -> None:
    """Write ``portfolio.parquet``, ``portfolio.csv``, the pages and charts into `folder`
    (staged and moved into place whole; an earlier table of the portfolio is replaced)."""
    from pandas.api.types import is_bool_dtype, is_numeric_dtype

    from .folders import staged_folder
    from .manifest import read_manifest
    from .outputs import neutralise_cell
    from .portfolio_page import write_pages

    folder = Path(folder)
    ours = os.path.isdir(folder) and (read_manifest(folder) or {}).get("command") == TABLE_COMMAND
    inputs = [s if Path(s).is_dir() else Path(s).parent for s in surveys]
    with staged_folder(folder, ours, inputs=inputs, command=TABLE_COMMAND, hold=hold,
                       notes=notes) as tmp:
        table.to_parquet(tmp / "portfolio.parquet", index=False, engine="pyarrow")
        csv_frame = table.copy()
        for col in csv_frame.columns:
            if not (is_numeric_dtype(csv_frame[col]) or is_bool_dtype(csv_frame[col])):
                csv_frame[col] = csv_frame[col].map(neutralise_cell)
        csv_frame.to_csv(tmp / "portfolio.csv", index=False, float_format="%.6g",
                         lineterminator="\n")
        write_pages(table, tmp)
