"""The performance harness behind ``partsdb bench``: import, ranking, search and start-up times.

It builds a synthetic catalog (:mod:`partsdb.perf.synthetic`, fixed seed) in a temporary
directory, imports it through the normal importer, and measures each figure as the median of K
runs after one warm-up run, all in this one process (the two CLI figures time child processes):

* ``import_rows_per_s``: the CSV file read and imported by ``exchange.import_devices`` in one
  transaction, into a fresh database each run (creating the empty schema is not timed). The
  warm-up imports the first 2,000 rows, enough to load every module and code path.
* ``import_mapped_rows_per_s``: the same catalog as a workshop's own sheet (``;``-separated,
  headers spelled "Type", "Vce max", "Ic (mA)", "fT/MHz", "Case"..., the Ic and fT columns'
  bare numbers in mA and MHz) imported by ``sheet.import_sheet``: header mapping, units per
  column, outline normalising and the plausibility checks all run. Median of K runs into a
  fresh database each, after a warm-up of the first 2,000 rows.
* ``rank_ms``: one ranking by :func:`partsdb.ranking.rank`, called exactly as
  :func:`partsdb.services.substitution.rank_substitutes` (the CLI's ``substitute``) calls it, with
  everything it loads already in memory: the catalog columns (the service's per-database cache),
  the stock quantities and drawers, the policy and weights. ``rank_cold_ms``: the whole service
  call with that cache cleared first, so the candidates are read from the database each time.
* ``rank_floor_ms``: a bare numpy boolean filter over the same in-memory columns (the
  requirement's polarity and kind group, as the service reads it): polarity and kind, then
  Vceo, Ic max and Ptot against the requirement. ``rank_ratio`` is rank / floor.
* ``find_ms``: one :meth:`partsdb.search.SearchIndex.find` on an index already built from the
  catalog. ``find_floor_ms``: rapidfuzz ``process.extract`` with ``fuzz.ratio``, limit 10, over
  the plain list of normalised designations, its strings laid out contiguously (as in a fresh
  process; see :meth:`_Bench.measure_find`): the full scan. ``find_ratio`` is find / floor.
* ``find_agreement``: the share of :data:`FIND_QUERIES` (the fuzzy-find test queries) and of
  :data:`AGREEMENT_SAMPLE` sloppy spellings of catalog keys for which ``find`` (pruned by
  :mod:`partsdb.findindex`) returns exactly the hits of ``find(..., exhaustive=True)`` (every
  key scored): same designations, scores and reasons in the same order.
* ``cli_help_s`` / ``cli_substitute_s``: wall time of a whole ``partsdb --help`` and of one
  ``partsdb substitute`` on the demo database (built from ``seed_data/``), as child processes.
  ``cli_substitute_catalog_s``: one ``partsdb substitute`` by spec (:data:`REQUIREMENT`) on the
  bench's own catalog database, a new process each run: the cold path at the catalog's size.
* ``peak_rss_mb``: this process's peak resident memory (``resource.getrusage``), taken last:
  the imports, rankings and searches. The synthetic catalog is drawn by a child process
  (drawing is the harness's work, not partsdb's); the largest child's peak is in the notes.

A figure that cannot be measured here (the demo seed files missing) is ``None`` and
the reason is in :attr:`BenchReport.notes`.
"""

from __future__ import annotations

import contextlib
import json
import os
import platform
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from partsdb.perf.server import check_empty_server, drop_bench_tables
from partsdb.perf.synthetic import SEED

DEFAULT_DEVICES = 200_000
DEFAULT_REPEAT = 5
WARMUP_IMPORT_ROWS = 2_000

METRICS: tuple[str, ...] = (
    "import_rows_per_s", "import_mapped_rows_per_s", "rank_ms", "rank_cold_ms",
    "rank_uncached_ms", "rank_floor_ms",
    "rank_ratio", "find_ms",
    "find_floor_ms", "find_ratio", "find_agreement", "cli_help_s", "cli_substitute_s",
    "cli_substitute_catalog_s", "peak_rss_mb",
)
"""Every measured figure, in report order; the JSON adds ``devices`` and ``machine``."""
TUI_METRICS: tuple[str, ...] = ("tui_first_screen_s", "tui_first_screen_pilot_s",
                                 "tui_keystroke_ms", "tui_keystroke_pilot_ms")
"""Figures of the terminal UI (``partsdb bench --tui``, measured by ``tui.timing``): in the
report only when measured."""

TARGETS: dict[str, tuple[str, float]] = {
    "rank_ms": ("<=", 30), "rank_ratio": ("<=", 10), "rank_cold_ms": ("<=", 500),
    "find_ms": ("<=", 10), "find_ratio": ("<=", 3), "find_agreement": (">=", 0.99),
    "import_rows_per_s": (">=", 20_000), "import_mapped_rows_per_s": (">=", 20_000),
    "cli_help_s": ("<=", 0.3), "cli_substitute_s": ("<=", 1.0), "peak_rss_mb": ("<=", 400),
}
"""The figures the project aims for at 200,000 devices on a 2-core machine."""

MILLION = 1_000_000
TARGETS_MILLION: dict[str, tuple[str, float]] = {
    "rank_ms": ("<=", 10), "rank_ratio": ("<=", 10), "rank_cold_ms": ("<=", 1000),
    "find_ms": ("<=", 30), "find_ratio": ("<=", 0.25), "find_agreement": (">=", 0.99),
    "import_rows_per_s": (">=", 30_000), "cli_help_s": ("<=", 0.3),
    "cli_substitute_catalog_s": ("<=", 1.0), "peak_rss_mb": ("<=", 600),
    "tui_first_screen_s": ("<=", 1.5), "tui_keystroke_ms": ("<=", 50),
}
"""The figures the project aims for at 1,000,000 devices on a 2-core machine."""

TARGETS_BY_SIZE: dict[int, dict[str, tuple[str, float]]] = {
    DEFAULT_DEVICES: TARGETS, MILLION: TARGETS_MILLION}
"""Targets are judged only at the catalog sizes they were set for."""

FIND_QUERIES: tuple[str, ...] = (
    "bc384b", " 2S-C3 377 ", "oc83", "BD384C", "BC572", "2N44O9", "2N44O0", "0C83", "2N7719",
    "BC349", "BFQ17", "2N7886", "BC757", "bc 384", "C3377", "2SC3377", "tuner",
    "matched output", "BC", "BC547B", "XY", "BC34", "BC3884",
)
"""The spellings the fuzzy-find tests type (tests/domain/test_search.py), run on the bench's
catalog: they test the search's passes, not a particular catalog."""
AGREEMENT_SAMPLE = 200
"""Sloppy spellings (:func:`sloppy_query`) of evenly spaced catalog keys added to them."""

# The mid-range requirement ranked in every run: what a repair of a driver stage might need,
# given as a spec the way ``partsdb substitute --polarity npn --vceo 60V ...`` gives it.
REQUIREMENT: dict[str, Any] = {
    "polarity": "npn", "kind": "bjt", "material": "si", "vceo": 60.0, "ic_max": 1.0,
    "ptot": 1.0, "ptot_ref": "ambient", "hfe_min": 60.0, "hfe_max": 180.0, "ft": 50e6,
    "package": "TO-126", "pinout": "ECB",
}
STRESS: dict[str, float] = {"vce_peak": 40.0, "ic_peak": 0.5, "power": 0.6, "ambient": 40.0}

Progress = Callable[[str, int, int], None]
"""``progress(step, done, total)``: called as the harness goes (done == total when a step ends)."""


@dataclass
class BenchReport:
    """The figures of one bench run, and why any of them is missing."""

    devices: int
    metrics: dict[str, float | None]
    machine: dict[str, Any]
    notes: list[str] = field(default_factory=list)
    """What is cached where, the queries used, and the reason for each missing figure."""

    def to_json(self) -> dict[str, Any]:
        """Exactly the metric keys plus ``devices`` and ``machine``."""
        return {"devices": self.devices, "machine": self.machine,
                **{name: self.metrics.get(name) for name in METRICS},
                **{name: self.metrics[name] for name in TUI_METRICS if name in self.metrics}}


def meets_target(name: str, value: float | None, devices: int = DEFAULT_DEVICES
                 ) -> bool | None:
    """Whether ``value`` meets the target of ``name`` at ``devices`` rows (None: no target
    there, or no value)."""
    targets = TARGETS_BY_SIZE.get(devices, {})
    if name not in targets or value is None:
        return None
    op, limit = targets[name]
    return value <= limit if op == "<=" else value >= limit


def machine_info() -> dict[str, Any]:
    return {"cores": os.cpu_count(), "python": platform.python_version(),
            "platform": platform.platform(terse=True)}


def peak_rss_mb(children: bool = False) -> float:
    """Peak resident memory of this process so far (or of its largest finished child), MiB
    (ru_maxrss is KiB on Linux, bytes on macOS)."""
    who = resource.RUSAGE_CHILDREN if children else resource.RUSAGE_SELF
    peak = resource.getrusage(who).ru_maxrss
    return peak / (1024 * 1024) if sys.platform == "darwin" else peak / 1024


def median_seconds(run: Callable[[], Any], repeat: int, warmup: Callable[[], Any] | None = None,
                   before: Callable[[], Any] | None = None,
                   tick: Callable[[int], None] | None = None) -> float:
    """Median wall time of ``repeat`` calls of ``run`` after one warm-up call.

    ``before`` runs untimed ahead of each call (the warm-up too), e.g. to clear a cache.
    """
    if before is not None:
        before()
    (warmup or run)()
    times = []
    for i in range(repeat):
        if before is not None:
            before()
        start = time.perf_counter()
        run()
        times.append(time.perf_counter() - start)
        if tick is not None:
            tick(i + 1)
    return statistics.median(times)


def _partsdb_command() -> list[str]:
    """How to start the installed ``partsdb`` command from this interpreter's environment."""
    beside = Path(sys.executable).with_name("partsdb")
    if beside.is_file():
        return [str(beside)]
    found = shutil.which("partsdb")
    if found:
        return [found]
    return [sys.executable, "-c", "import sys; from partsdb.cli import main; sys.exit(main())"]


def _run_cli(args: list[str], env: dict[str, str]) -> None:
    done = subprocess.run([*_partsdb_command(), *args], env=env, stdout=subprocess.DEVNULL,
                          stderr=subprocess.PIPE, text=True, timeout=120, check=False)
    if done.returncode != 0:
        raise RuntimeError(f"partsdb {' '.join(args)} exited {done.returncode}: "
                           f"{done.stderr.strip()[-300:]}")


class _Bench:
    def __init__(self, devices: int, repeat: int, workdir: Path, progress: Progress | None,
                 seed: int, server: str | None = None) -> None:
        self.n = devices
        self.server = server
        """A PostgreSQL URL checked empty by :func:`check_empty_server` (None: SQLite files)."""
        self.repeat = repeat
        self.dir = workdir
        self.progress = progress or (lambda step, done, total: None)
        self.seed = seed
        self.metrics: dict[str, float | None] = dict.fromkeys(METRICS)
        self.notes: list[str] = []
        self.csv = workdir / "catalog.csv"
        self.db: Any = None
        self.bipolar_rows = 0

    # ------------------------------------------------------------------ catalog and import

    def build_csv(self) -> None:
        """The synthetic catalog, written by a child process: drawing a million rows at once
        holds about 500 MiB that is the harness's, not partsdb's (its peak is in the notes)."""
        step = "writing the synthetic catalog"
        self.progress(step, 0, self.n)
        code = ("import sys, json; from partsdb.perf.synthetic import write_catalog_csv; "
                "c = write_catalog_csv(sys.argv[1], int(sys.argv[2]), int(sys.argv[3])); "
                "k = c.text['kind']; "
                "print(json.dumps({'fallback': int(c.fallback_names), "
                "'kinds': {x: int((k == x).sum()) for x in ('bjt', 'darlington', 'mosfet', 'jfet')}}))")
        done = subprocess.run([sys.executable, "-c", code, str(self.csv), str(self.n),
                               str(self.seed)], capture_output=True, text=True, check=False)
        if done.returncode != 0:
            raise RuntimeError(f"the synthetic catalog could not be written: "
                               f"{done.stderr.strip()[-300:]}")
        drawn = json.loads(done.stdout.strip().splitlines()[-1])
        fallback, kinds = int(drawn["fallback"]), drawn["kinds"]
        self.progress(step, self.n, self.n)
        self.bipolar_rows = kinds["bjt"] + kinds["darlington"]
        self.notes.append(f"catalog: {self.n - self.bipolar_rows:,} of {self.n:,} rows are FETs "
                          f"({kinds['mosfet']:,} MOSFETs, {kinds['jfet']:,} JFETs)")
        # Read now, while the writer is the only finished child: a later child's figure would
        # count the pages it shared with this (by then larger) process when it was forked.
        self.notes.append(f"the synthetic catalog's writer (a child process) peaked at "
                          f"{peak_rss_mb(children=True):.0f} MiB; peak_rss_mb is this "
                          "process's: imports, rankings, searches")
        if fallback:
            self.notes.append(f"{fallback} designations fell back to numbered house "
                              "names (their scheme's name space was full)")

    @property
    def catalog_target(self) -> str:
        """The bench's catalog database as ``--db`` takes it."""
        return self.server or str(self.dir / "catalog.sqlite")

    def _fresh_db(self, name: str) -> Any:
        from partsdb.storage.database import open_database

        if self.server is not None:  # one database: emptied (only the bench's tables) instead
            drop_bench_tables(self.server)
            return open_database(self.server, notify=None)
        path = self.dir / name
        for suffix in ("", "-wal", "-shm", "-journal"):
            Path(str(path) + suffix).unlink(missing_ok=True)
        return open_database(path, notify=None)

    def _time_import(self, csv: Path, db_name: str, step: str,
                     load: Callable[[Any, Path], Any]) -> tuple[float, Any]:
        """Median seconds of ``load(session, csv)`` into a fresh database each run (after one
        warm-up on the first rows); returns them with the last run's database, still open."""
        warm = csv.with_name(f"{csv.stem}-warmup.csv")
        with open(csv, encoding="utf-8") as src, open(warm, "w", encoding="utf-8") as dst:
            for i, line in enumerate(src):
                if i > WARMUP_IMPORT_ROWS:
                    break
                dst.write(line)
        pending: list[Any] = []

        def prepare() -> None:
            for db in pending:
                db.dispose()
            pending.clear()
            pending.append(self._fresh_db(db_name))

        def import_into(path: Path) -> None:
            with pending[0].session() as session:
                load(session, path)

        self.progress(step, 0, self.repeat)
        seconds = median_seconds(lambda: import_into(csv), self.repeat,
                                 warmup=lambda: import_into(warm), before=prepare,
                                 tick=lambda i: self.progress(step, i, self.repeat))
        return seconds, pending[0]

    def measure_import(self) -> None:
        from partsdb.services import exchange

        seconds, self.db = self._time_import(
            self.csv, "catalog.sqlite", f"importing {self.n:,} rows ({self.repeat} runs)",
            lambda session, path: exchange.import_devices(session, path=path))
        # the last run's database serves the ranking and search figures
        self.metrics["import_rows_per_s"] = self.n / seconds

    def measure_import_mapped(self) -> None:
        from partsdb.services import sheet

        mapped = self.dir / "sheet.csv"
        write_mapped_sheet(self.csv, mapped)
        seconds, db = self._time_import(
            mapped, "sheet.sqlite",
            f"importing {self.n:,} rows of a mapped sheet ({self.repeat} runs)",
            sheet.import_sheet)
        db.dispose()
        self.metrics["import_mapped_rows_per_s"] = self.n / seconds

    # ------------------------------------------------------------------ ranking

    def measure_rank(self) -> None:
        from partsdb.ranking import Stress, rank
        from partsdb.services import substitution
        from partsdb.services.config import load_policy, load_weights

        step = "ranking substitutes"
        self.progress(step, 0, 4)
        stress = Stress(**STRESS)

        def cold() -> Any:
            return substitution.rank_substitutes(self.db, None, REQUIREMENT, stress, None)

        def forget_everything() -> None:
            with self.db.session() as session:
                substitution.clear_cache(session)

        self.metrics["rank_uncached_ms"] = 1000 * median_seconds(
            cold, self.repeat, before=forget_everything)
        self.progress(step, 1, 4)
        self.metrics["rank_cold_ms"] = 1000 * median_seconds(
            cold, self.repeat, before=substitution.clear_cache)
        self.progress(step, 2, 4)

        # Load everything once exactly as rank_substitutes does, then time rank() alone.
        policy, weights = load_policy(None), load_weights()
        with self.db.session() as session:
            requirement = substitution.build_requirement(session, None, REQUIREMENT)
            cat, considered = substitution.load_group(session, requirement.polarity,
                                                      requirement.kind)
            qty, places = substitution.stock_columns(session, cat)
        result = rank(cat, requirement, stress, policy, weights, qty, history=None,
                      locations=places, limit=15, considered=considered)
        if considered != self.n or not result.candidates:
            raise RuntimeError(f"ranking saw {considered} rows and returned "
                               f"{len(result.candidates)} candidates; expected {self.n} rows and "
                               "some candidates")
        self.metrics["rank_ms"] = 1000 * median_seconds(
            lambda: rank(cat, requirement, stress, policy, weights, qty, history=None,
                         locations=places, limit=15, considered=considered), self.repeat)
        self.progress(step, 3, 4)

        from partsdb.ranking import KINDS, POLARITIES

        pol = POLARITIES.index(REQUIREMENT["polarity"])
        kind = KINDS.index(REQUIREMENT["kind"])
        vceo, ic, ptot = REQUIREMENT["vceo"], REQUIREMENT["ic_max"], REQUIREMENT["ptot"]

        def floor() -> np.ndarray:
            mask = (cat.polarity == pol) & (cat.kind == kind)
            mask &= (cat.vceo >= vceo) & (cat.ic_max >= ic) & (cat.ptot >= ptot)
            return np.flatnonzero(mask)

        self.metrics["rank_floor_ms"] = 1000 * median_seconds(floor, self.repeat)
        self.progress(step, 4, 4)
        self.notes.append(
            f"rank: {result.compatible:,} of {result.considered:,} rows compatible; rank_ms has "
            "the catalog columns (the service's per-database cache), stock, drawers, policy and "
            "weights in memory; rank_cold_ms clears that cache before each run (the column "
            "cache on disk stays), rank_uncached_ms removes the disk cache too")

    # ------------------------------------------------------------------ search

    def measure_find(self) -> None:
        from rapidfuzz import fuzz, process

        from partsdb.designations import normalize
        from partsdb.search import SearchIndex

        step = "fuzzy find"
        self.progress(step, 0, 3)
        with self.db.session() as session:
            rows = session.connection().exec_driver_sql(
                "SELECT designation, notes, key FROM devices ORDER BY key").all()
        designations = [r[0] for r in rows]
        notes = [r[1] for r in rows]
        # The floor's strings laid out one after another, as in a fresh process: after the
        # imports the heap is churned, and 200,000 scattered string objects made the same
        # extract 4-6 times slower (cache misses), which is not rapidfuzz's cost.
        keys = "\n".join(r[2] for r in rows).split("\n")
        del rows
        query = sloppy_query(keys[len(keys) // 2])
        q = normalize(query)
        self.metrics["find_floor_ms"] = 1000 * median_seconds(
            lambda: process.extract(q, keys, scorer=fuzz.ratio, limit=10), self.repeat)
        self.progress(step, 1, 3)
        index = SearchIndex(designations, notes)
        hits = index.find(query, limit=10)
        if not hits:
            raise RuntimeError(f"find {query!r} returned nothing on {self.n:,} devices")
        self.metrics["find_ms"] = 1000 * median_seconds(
            lambda: index.find(query, limit=10), self.repeat)
        self.progress(step, 2, 3)
        stride = max(1, len(keys) // AGREEMENT_SAMPLE)
        queries = [*FIND_QUERIES, *(sloppy_query(k) for k in keys[stride // 2::stride])]
        agree, times = 0, []
        for text in queries:
            start = time.perf_counter()
            pruned = index.find(text, limit=10)
            times.append(time.perf_counter() - start)
            agree += pruned == index.find(text, limit=10, exhaustive=True)
        self.metrics["find_agreement"] = agree / len(queries)
        self.notes.append(f"find: query {query!r} (a sloppy spelling of "
                          f"{keys[len(keys) // 2]}), best hit {hits[0].designation} "
                          f"({hits[0].reason}); index built before timing")
        self.notes.append(
            f"find over the {len(queries)} agreement queries: median "
            f"{1000 * statistics.median(times):.1f} ms, slowest {1000 * max(times):.1f} ms; "
            f"{agree} of {len(queries)} the same hits as scoring every key")
        self.progress(step, 3, 3)

    # ------------------------------------------------------------------ CLI

    def measure_cli(self) -> None:
        step = "partsdb as a command"
        self.progress(step, 0, 3)
        env = dict(os.environ)
        env.pop("PARTSDB_DB", None)
        self.metrics["cli_help_s"] = median_seconds(lambda: _run_cli(["--help"], env), self.repeat)
        self.progress(step, 1, 3)
        # The database through the environment: a server URL's password stays off the
        # command line (where other users' `ps` would show it).
        catalog_env = {**env, "PARTSDB_DB": self.catalog_target}
        catalog_args = ["substitute", *substitute_options(REQUIREMENT)]
        self.metrics["cli_substitute_catalog_s"] = median_seconds(
            lambda: _run_cli(catalog_args, catalog_env), self.repeat)
        self.notes.append("cli_substitute_catalog_s: partsdb substitute "
                          f"{' '.join(catalog_args[1:])} on the bench's catalog database")
        self.progress(step, 2, 3)
        from partsdb.services.demo import DemoError, build_demo

        demo_path = self.dir / "demo.sqlite"
        try:
            demo = build_demo(demo_path)
        except DemoError as err:
            self.notes.append(f"cli_substitute_s: not measured, the demo database cannot be "
                              f"built ({err})")
            return
        try:
            original = _first_obsolete(demo)
        finally:
            demo.dispose()
        args = ["--db", str(demo_path), "substitute", original]
        self.metrics["cli_substitute_s"] = median_seconds(lambda: _run_cli(args, env), self.repeat)
        self.notes.append(f"cli_substitute_s: partsdb substitute {original} on the demo database")
        self.progress(step, 3, 3)


def substitute_options(requirement: dict[str, Any]) -> list[str]:
    """``partsdb substitute`` options giving ``requirement`` (from the requirement rows of
    :mod:`partsdb.spec_fields`; a window such as hFE as ``LOW..HIGH``)."""
    from partsdb.spec_fields import REQUIREMENT_FIELDS, WINDOW_ENDS

    options: list[str] = []
    for row in REQUIREMENT_FIELDS:
        if row.name in WINDOW_ENDS:
            low, high = (requirement.get(end) for end in WINDOW_ENDS[row.name])
            value: Any = None if low is None else f"{low:g}..{high:g}"
        else:
            value = requirement.get(row.name)
        if value is not None:
            options += [row.option, f"{value:g}" if isinstance(value, float) else str(value)]
    return options


def sloppy_query(key: str) -> str:
    """A bench-style misspelling of ``key``: lower case, two adjacent digits swapped (or the
    last character dropped when there are none), so the search must work rather than look up."""
    text = key.lower()
    for i in range(len(text) - 1):
        if text[i].isdigit() and text[i + 1].isdigit() and text[i] != text[i + 1]:
            return text[:i] + text[i + 1] + text[i] + text[i + 2:]
    return text[:-1]


def _first_obsolete(db: Any) -> str:
    from sqlalchemy import select

    from partsdb.storage.models import DeviceRow

    with db.session() as session:
        name = session.scalars(select(DeviceRow.designation).where(DeviceRow.obsolete)
                               .order_by(DeviceRow.key)).first()
        if name is None:
            name = session.scalars(select(DeviceRow.designation).order_by(DeviceRow.key)).first()
    if name is None:
        raise RuntimeError("the demo database holds no device")
    return str(name)


def _load_average() -> str:
    try:
        return f"{os.getloadavg()[0]:.2f}"
    except OSError:  # not available on this platform
        return "unknown"


@contextlib.contextmanager
def _workdir(path: str | os.PathLike[str] | None) -> Iterator[Path]:
    if path is not None:
        Path(path).mkdir(parents=True, exist_ok=True)
        yield Path(path)
        return
    with tempfile.TemporaryDirectory(prefix="partsdb-bench-") as tmp:
        yield Path(tmp)


@contextlib.contextmanager
def _cache_in(folder: Path) -> Iterator[None]:
    """The column cache in ``folder`` for this process and the commands it starts."""
    from partsdb.services.colcache import ENV

    before = os.environ.get(ENV)
    os.environ[ENV] = str(folder)
    try:
        yield
    finally:
        if before is None:
            os.environ.pop(ENV, None)
        else:
            os.environ[ENV] = before


SHEET_HEADERS: dict[str, str] = {
    "designation": "Type", "kind": "Kind", "polarity": "Polarity", "material": "Material",
    "vceo": "Vce max", "vcbo": "VCB", "vebo": "Veb (V)", "ic_max": "Ic (mA)", "ptot": "Ptot [W]",
    "ptot_ref": "Rating", "tj_max": "Tj", "hfe_min": "hFE min", "hfe_max": "hFE max",
    "hfe_ic": "hFE at Ic", "ft": "fT/MHz", "vbe_on": "Vbe", "vbe_ic": "Vbe at Ic",
    "vce_sat": "Vce sat", "icbo": "Icbo", "package": "Case", "pinout": "Pins",
    "application": "Use", "obsolete": "EOL", "notes": "Comments", "low_stock": "Min stock",
}
"""How the bench's workshop sheet spells each column (spellings partsdb.columns reads)."""


def write_mapped_sheet(source: Path, target: Path) -> None:
    """The synthetic catalog as a workshop sheet: spelled headers, `;` cells, Ic bare numbers
    in mA and fT bare numbers in MHz (cells with their own unit kept), outlines lower-cased."""
    import pandas as pd

    # In chunks: a million rows of text cells at once would hold about 1 GiB of Python strings.
    with open(target, "w", encoding="utf-8", newline="") as out:
        for i, frame in enumerate(pd.read_csv(source, dtype=str, keep_default_na=False,
                                              chunksize=50_000)):
            for name, factor in (("ic_max", 1e3), ("ft", 1e-6)):
                numbers = pd.to_numeric(frame[name], errors="coerce")
                bare = numbers.notna()
                frame.loc[bare, name] = (numbers[bare] * factor).map(lambda v: f"{v:.6g}")
            frame["package"] = frame["package"].str.lower().str.replace("-", "", regex=False)
            frame = frame.rename(columns=SHEET_HEADERS)
            frame.to_csv(out, sep=";", index=False, header=i == 0, lineterminator="\n")


def run_bench(devices: int = DEFAULT_DEVICES, repeat: int = DEFAULT_REPEAT, *,
              workdir: str | os.PathLike[str] | None = None, progress: Progress | None = None,
              seed: int = SEED, db_url: str | None = None,
              extra: Callable[[str], dict[str, float]] | None = None) -> BenchReport:
    """Build the synthetic catalog of ``devices`` rows and measure every figure (see module doc).

    ``workdir`` keeps the CSV and databases there (default: a temporary directory, removed).
    ``db_url``: a PostgreSQL database to run in instead of SQLite files; it must be empty
    (:func:`check_empty_server`, checked first) and is emptied again at the end.
    ``extra(catalog_database)`` measures more figures on the bench's catalog database (a path
    or URL), last, in this process (the CLI's ``--tui``: the terminal UI is a layer above this
    harness).
    """
    if isinstance(devices, bool) or not isinstance(devices, int) or devices < 100:
        raise ValueError(f"devices: {devices!r} is not valid; expected a whole number of 100 or more")
    if isinstance(repeat, bool) or not isinstance(repeat, int) or repeat < 1:
        raise ValueError(f"repeat: {repeat!r} is not valid; expected a whole number of 1 or more")
    if db_url is not None:
        check_empty_server(db_url)
    load_before = _load_average()
    with _workdir(workdir) as folder, _cache_in(folder / "column-cache"):
        bench = _Bench(devices, repeat, folder, progress, seed, db_url)
        try:
            bench.build_csv()
            # The mapped sheet first: on a server both share the one database, and the plain
            # import's catalog must be the one left for the ranking and search figures.
            bench.measure_import_mapped()
            bench.measure_import()
            bench.measure_rank()
            bench.measure_find()
            bench.measure_cli()
            if extra is not None:
                bench.db.dispose()
                bench.progress("the terminal UI", 0, 1)
                bench.metrics.update(extra(bench.catalog_target))
                bench.progress("the terminal UI", 1, 1)
        finally:
            if bench.db is not None:
                bench.db.dispose()
            if db_url is not None:
                drop_bench_tables(db_url)
    m = bench.metrics
    if m["rank_ms"] is not None and m["rank_floor_ms"]:
        m["rank_ratio"] = m["rank_ms"] / m["rank_floor_ms"]
    if m["find_ms"] is not None and m["find_floor_ms"]:
        m["find_ratio"] = m["find_ms"] / m["find_floor_ms"]
    m["peak_rss_mb"] = peak_rss_mb()
    if db_url is not None:
        bench.notes.insert(0, "database: PostgreSQL (the one --db names, emptied again at the "
                              "end); rank_cold_ms reads the server, as a server catalog is never "
                              "cached on disk")
    # Other work on the machine skews every figure; the load average says how much there was.
    bench.notes.append(f"1-minute load average {load_before} at the start, {_load_average()} at "
                       f"the end ({os.cpu_count()} cores)")
    return BenchReport(devices, m, machine_info(), bench.notes)
