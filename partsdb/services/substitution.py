"""Substitution glue: catalog columns from the database, requirement, stock, history, ranking.

The candidate columns are read with raw DBAPI queries into numpy (never ORM objects) and kept
per database, keyed on (row count, newest ``updated_at``, highest id), so repeated rankings in
one process reuse the arrays; any device added, edited, imported or removed changes the key.
A new process finds them in :mod:`partsdb.services.colcache` (SQLite only), under the same key.

A ranking needs only the rows of the requirement's polarity and kind (the hard constraints), so
:func:`rank_substitutes` reads and caches that group alone (:func:`load_group`: one query
filtered in SQL, about half the rows); the whole catalog (:func:`load_catalog`) is read only
for ``show_rejected``, which lists the other groups too.

The workflow around a ranking lives here too, for every face: resolving the original a
technician typed (:func:`resolve_original`), reading a spec line (:func:`parse_spec`) and the
stress inputs (:func:`parse_stress`), and writing the ranking report to a file (:func:`write_report`).
"""

from __future__ import annotations

import threading
from collections.abc import Callable, Iterable, Mapping, Sequence
from itertools import chain
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session

from partsdb.derating import Policy
from partsdb.designations import normalize
from partsdb.device import FIELD_BY_NAME
from partsdb.ranking import (
    KINDS,
    MATERIALS,
    POLARITIES,
    CatalogColumns,
    PastSwaps,
    RankResult,
    Requirement,
    SpecError,
    Stress,
    Weights,
    outline_key,
    rank,
)
from partsdb.services import catalog as catalog_service
from partsdb.spec_fields import SPEC_NAMES, STRESS_FIELDS, read_sink
from partsdb.storage.database import Database
from partsdb.storage.models import SwapRow

if TYPE_CHECKING:
    from partsdb.search import SearchIndex

_NUMBER_COLUMNS = ("vceo", "vcbo", "vebo", "ic_max", "ptot", "tj_max", "hfe_min", "hfe_max",
                   "hfe_ic", "ft")
_CACHE: dict[str, tuple[tuple[Any, ...], dict[str, CatalogColumns]]] = {}
"""Per database: (catalog version, columns by part: "all" or "npn/bjt" and so on)."""
_LOCK = threading.Lock()

SPEC_FIELDS = SPEC_NAMES
"""Requirement fields a spec may give (from :data:`partsdb.spec_fields.REQUIREMENT_FIELDS`)."""


_MISSING = -1e300
"""Stands for NULL in the numeric query (every stored quantity is positive), so the rows go
straight into ``np.fromiter`` without a None check per cell."""


def _case(column: str, table: tuple[str, ...]) -> str:
    """Code + 1 of a choice column (0: not one of ``table``)."""
    whens = " ".join(f"WHEN '{v}' THEN {i + 1}" for i, v in enumerate(table))
    return f"CASE {column} {whens} ELSE 0 END"


# The four choice columns travel packed in one integer (each code < 4): a quarter fewer Python
# objects per row, which is what reading costs.
_NUMBER_SELECT = (
    "SELECT "
    f"{_case('polarity', POLARITIES)} + 4 * {_case('kind', KINDS)} "
    f"+ 16 * {_case('material', MATERIALS)} + 64 * (CASE WHEN ptot_ref = 'case' THEN 1 ELSE 0 END), "
    + ", ".join(f"COALESCE({c}, {_MISSING})" for c in _NUMBER_COLUMNS))
# The bipolar ranking reads bipolar rows only: a FET is never offered for a bipolar original
# (nor listed as an incompatible one), whatever else the catalog holds.
_BIPOLAR_ONLY = "WHERE kind IN (" + ", ".join(f"'{k}'" for k in KINDS) + ")"
_NUMBERS_SQL = _NUMBER_SELECT + f" FROM devices {_BIPOLAR_ONLY} ORDER BY id"
_TEXT_SQL = f"SELECT designation, key, package, pinout FROM devices {_BIPOLAR_ONLY} ORDER BY id"
# One group. Outline and lead order travel as one cell (few distinct pairs, split once each):
# what reading costs is Python objects per cell. The values are checked against POLARITIES and
# KINDS and written in, so the text is the same for every driver's parameter style.
_GROUP_SQL = (_NUMBER_SELECT + ", designation, key, COALESCE(package, '') || '|' || "
              "COALESCE(pinout, '') FROM devices WHERE {pol} = '{polarity}' AND {kind} = "
              "'{kind_value}' ORDER BY id")


def catalog_version(session: Session) -> tuple[Any, ...]:
    """(row count, newest updated_at, highest id): changes whenever a device is added, edited
    or removed."""
    row = session.connection().exec_driver_sql(
        "SELECT COUNT(*), MAX(updated_at), MAX(id) FROM devices").one()
    return (int(row[0]), str(row[1]), str(row[2]))


def read_catalog(session: Session) -> CatalogColumns:
    """Every device as columns (two raw queries in id order, no ORM objects).

    Codes and NULLs are resolved in SQL, so the numeric rows are plain floats for
    ``np.fromiter``; the text query carries only the four text columns.
    """
    conn = session.connection()
    cursor = conn.connection.cursor()
    try:
        cursor.execute(_NUMBERS_SQL)
        number_rows = cursor.fetchall()
        cursor.execute(_TEXT_SQL)
        text_rows = cursor.fetchall()
    finally:
        cursor.close()
    return _columns_from_rows(number_rows, text_rows, 0)


def read_group(session: Session, polarity: str, kind: str) -> CatalogColumns:
    """The devices of one polarity and kind as columns (one raw query, filtered in SQL)."""
    if polarity not in POLARITIES or kind not in KINDS:
        raise SpecError(f"group: {polarity!r}/{kind!r} is not valid; expected npn or pnp and "
                        "bjt or darlington")
    conn = session.connection()
    # On SQLite a unary + keeps the planner off the (polarity, kind) index, whose row-by-row
    # lookups cost more than scanning the table when the group is half of it.
    plus = "+" if conn.dialect.name == "sqlite" else ""
    sql = _GROUP_SQL.format(pol=f"{plus}polarity", polarity=polarity, kind=f"{plus}kind",
                            kind_value=kind)
    cursor = conn.connection.cursor()
    try:
        cursor.execute(sql)
        rows = cursor.fetchall()
    finally:
        cursor.close()
    width = 1 + len(_NUMBER_COLUMNS)
    text: list[Any] = [[row[k] for row in rows] for k in range(width, width + 3)]
    pairs = sorted(set(text[2]))
    split = {pair: pair.rsplit("|", 1) for pair in pairs}  # a pinout holds no "|"
    pair_code = {pair: i for i, pair in enumerate(pairs)}
    per_row = np.fromiter(map(pair_code.__getitem__, text[2]), dtype=np.int32, count=len(rows))
    packages, package_of_pair = _factorize([split[p][0] or None for p in pairs], outline_key)
    pinouts, pinout_of_pair = _factorize([split[p][1] or None for p in pairs],
                                         lambda p: p or None)
    return _columns_from_rows(rows, rows, width, text[:2],
                              (packages, np.array(package_of_pair, dtype=np.int32)[per_row]),
                              (pinouts, np.array(pinout_of_pair, dtype=np.int16)[per_row]))


def _columns_from_rows(number_rows: list[Any], text_rows: list[Any], text_at: int,
                       names: list[Any] | None = None,
                       package: tuple[list[str], np.ndarray] | None = None,
                       pinout: tuple[list[str], np.ndarray] | None = None) -> CatalogColumns:
    """Columns from the numeric rows (packed codes, then the numbers) and the text rows
    (designation, key, package, pinout from position ``text_at``); both lists may be one.
    ``names`` (designations, keys), ``package`` and ``pinout`` (names, codes) may be given
    already split out."""
    n = len(number_rows)
    width = 1 + len(_NUMBER_COLUMNS)
    cells = chain.from_iterable(number_rows) if text_at == 0 else \
        chain.from_iterable(r[:width] for r in number_rows)
    numbers = np.fromiter(cells, dtype=float, count=n * width).reshape(n, width).T.copy()
    numbers[numbers == _MISSING] = np.nan
    packed = numbers[0].astype(np.int16)
    codes = [((packed >> shift) & 3).astype(np.int8) - 1 for shift in (0, 2, 4)]
    text: list[Any] = names if names is not None else \
        [[row[k] for row in text_rows] for k in range(text_at, text_at + 2)]
    if package is None:
        names_, per_row = _factorize([row[text_at + 2] for row in text_rows], outline_key)
        package = (names_, np.array(per_row, dtype=np.int32))
    if pinout is None:
        names_, per_row = _factorize([row[text_at + 3] for row in text_rows],
                                     lambda p: p or None)
        pinout = (names_, np.array(per_row, dtype=np.int16))
    packages, package_codes = package
    pinouts, pinout_codes = pinout
    # Designations and keys as fixed-width Unicode arrays: no Python object per row is kept
    # (the rows shown become strings when read).
    return CatalogColumns(
        designation=np.array(text[0], dtype=str), key=np.array(text[1], dtype=str),
        polarity=codes[0], kind=codes[1], material=codes[2],
        case_rated=((packed >> 6) & 1).astype(bool),
        package=package_codes, pinout=pinout_codes,
        packages=tuple(packages), pinouts=tuple(pinouts),
        **{name: numbers[1 + j] for j, name in enumerate(_NUMBER_COLUMNS)})


def _factorize(values: Sequence[Any], fold: Any) -> tuple[list[str], list[int]]:
    """(display names by code, code per row) grouping values by ``fold`` (-1 for none).

    Distinct values are few, so they are sorted first: codes and names do not depend on set
    order, and each outline shows its first spelling in sort order.
    """
    names: list[str] = []
    by_fold: dict[str, int] = {}
    code_of: dict[Any, int] = {None: -1}
    for value in sorted(v for v in set(values) if v is not None):
        folded = fold(value)
        if folded is None:
            code_of[value] = -1
            continue
        if folded not in by_fold:
            by_fold[folded] = len(names)
            names.append(str(value))
        code_of[value] = by_fold[folded]
    return names, [code_of[v] for v in values]


def _cache_key(session: Session) -> str:
    bind = session.get_bind()
    return f"{id(bind)}:{bind.url.render_as_string(hide_password=True)}"


def load_catalog(session: Session) -> CatalogColumns:
    """The catalog columns, from the per-database cache when the devices have not changed."""
    return _cached(session, "all", lambda: read_catalog(session))[0]


def _from_disk(session: Session, part: str, version: tuple[Any, ...],
               read: Callable[[], CatalogColumns]) -> CatalogColumns:
    """``read()``, or the columns a process before kept on disk at this ``version``."""
    from partsdb.services import colcache

    database = colcache.database_path(session)
    if database is None:
        return read()
    columns = colcache.load(database, part, version)
    if columns is None:
        columns = read()
        colcache.store(database, part, version, columns)
    return columns


def load_group(session: Session, polarity: str, kind: str) -> tuple[CatalogColumns, int]:
    """(columns of one polarity and kind, rows in the whole catalog), cached like
    :func:`load_catalog`; the whole catalog's cached columns serve when already loaded."""
    key = _cache_key(session)
    version = catalog_version(session)
    with _LOCK:
        hit = _CACHE.get(key)
        whole = hit[1].get("all") if hit is not None and hit[0] == version else None
    if whole is not None:
        return whole, int(version[0])
    group = _cached(session, f"{polarity}/{kind}", lambda: read_group(session, polarity, kind),
                    version)[0]
    return group, int(version[0])


def _cached(session: Session, part: str, read: Any, version: tuple[Any, ...] | None = None
            ) -> tuple[CatalogColumns, tuple[Any, ...]]:
    key = _cache_key(session)
    version = version if version is not None else catalog_version(session)
    with _LOCK:
        hit = _CACHE.get(key)
        if hit is not None and hit[0] == version and part in hit[1]:
            return hit[1][part], version
    columns = _from_disk(session, part, version, read)
    with _LOCK:
        hit = _CACHE.get(key)
        if hit is None or hit[0] != version:
            hit = (version, {})
            _CACHE[key] = hit
        hit[1][part] = columns
    return columns, version


def clear_cache(session: Session | None = None) -> None:
    """Forget the columns kept in this process; with ``session``, also those kept on disk for
    its database."""
    with _LOCK:
        _CACHE.clear()
    if session is not None:
        from partsdb.services import colcache

        database = colcache.database_path(session)
        if database is not None:
            colcache.remove(database)


def stock_columns(session: Session, cat: CatalogColumns
                  ) -> tuple[np.ndarray, dict[str, list[str]]]:
    """In-stock quantity per catalog row, and drawer paths per key."""
    from partsdb.services.stock import stock_summary

    summary = stock_summary(session)
    qty = np.zeros(cat.size, dtype=np.int64)
    places: dict[str, list[str]] = {}
    for key, s in summary.items():
        i = cat.index.get(key)
        if i is not None:
            qty[i] = s.quantity
            places[key] = list(s.locations)
    return qty, places


def swap_history(session: Session, original: str) -> dict[str, PastSwaps]:
    """What the swap log says about each substitute used for ``original``."""
    counts: dict[str, list[Any]] = {}
    rows = session.execute(select(SwapRow.substitute_key, SwapRow.outcome, SwapRow.job)
                           .where(SwapRow.original_key == normalize(original))
                           .order_by(SwapRow.at, SwapRow.id)).all()
    for key, outcome, job in rows:
        entry = counts.setdefault(key, [0, 0, []])
        if outcome == "worked":
            entry[0] += 1
        elif outcome == "failed":
            entry[1] += 1
        # only swaps with an outcome are counted, so only their jobs are named (with it)
        if job and outcome in ("worked", "failed") and f"{job}: {outcome}" not in entry[2]:
            entry[2].append(f"{job}: {outcome}")
    return {k: PastSwaps(w, f, tuple(jobs)) for k, (w, f, jobs) in counts.items()}


def build_requirement(session: Session, designation: str | None,
                      given: Mapping[str, Any] | None = None) -> Requirement:
    """The original's stored record with ``given`` values on top, or the given spec alone.

    Raises :class:`catalog.NotFound` when the named original is not stored and no polarity
    was given (exit 1, like every not-found), :class:`SpecError` for an unusable spec.
    """
    given = {k: v for k, v in (given or {}).items() if v is not None}
    unknown = sorted(set(given) - set(SPEC_FIELDS))
    if unknown:
        raise SpecError(f"unknown spec field(s): {', '.join(unknown)}; known: "
                        + ", ".join(SPEC_FIELDS))
    device = catalog_service.get_device(session, designation) if designation else None
    if device is not None:
        return Requirement.from_device(device).overridden(**given)
    if "polarity" not in given:
        if designation:
            hint = catalog_service.did_you_mean(session, designation)
            raise catalog_service.NotFound(
                f"no stored device {designation!r} and no --polarity/--kind spec "
                f"given{hint}; give the spec, such as --polarity pnp --vceo 30V --ic 0.5A")
        raise SpecError("no original designation and no --polarity/--kind spec given; name a "
                        "stored device or give the spec, such as --polarity npn --vceo 30V")
    if "ptot" in given and "ptot_ref" not in given:
        # A free-air and a case rating differ several times over: never guessed.
        raise SpecError(f"ptot_ref: not given for ptot {given['ptot']:g} W; expected ambient "
                        "(free-air rating) or case (--ptot-ref ambient|case)")
    return Requirement(**given, designation=designation, source="given")


def resolve_original(session: Session, query: str,
                     index: Callable[[], SearchIndex] | None = None) -> tuple[str, str]:
    """(stored designation meant by ``query``, how it was read): the exact name first, else the
    best fuzzy hit of the search index (``index()`` gives one kept by the caller, read only when
    the name is not exact; default: built from the catalog); the note is "" for an exact name.
    Raises :class:`partsdb.services.catalog.NotFound` when nothing is close."""
    query = query.strip()
    device = catalog_service.get_device(session, query)
    if device is not None:
        return device.designation, ""
    if index is None:
        from partsdb.search import SearchIndex

        found = SearchIndex(catalog_service.designations_and_notes(session)[0])
    else:
        found = index()
    hits = found.find(query, limit=1)
    if not hits:
        raise catalog_service.NotFound(f"original: {query!r} is not in the catalog and nothing "
                                       "is close")
    return hits[0].designation, f"{query!r} read as {hits[0].designation} ({hits[0].reason})"


def original_kind(session: Session, designation: str | None) -> str | None:
    """The kind of a stored original (None: not stored or not named): the faces show the
    stresses of its family (:func:`partsdb.spec_fields.stresses_for`)."""
    device = catalog_service.get_device(session, designation) if designation else None
    return device.kind if device is not None else None


def spec_key(text: str) -> str:
    """A spec name as typed, compared without case, spaces, ``_`` or ``-``: ``Ic max``, ``Icmax``
    and ``ic_max`` are one name."""
    return "".join(ch for ch in text.casefold() if ch not in " _-")


SPEC_NAMES_TYPED: dict[str, str] = {
    **{spec_key(name): name for name in SPEC_FIELDS},
    **{spec_key(FIELD_BY_NAME[name].label): name for name in SPEC_FIELDS},
}
"""Every way a spec name may be typed (the field's label or its key) -> the field."""


def parse_spec(text: str) -> dict[str, Any]:
    """A spec line, ``name=value`` pairs (spaces or commas between), each value read like the
    device field it names; a name is the field's label written without spaces, in any case
    (``Vceo=60V Icmax=1A Package=TO-126``), or its key (``ic_max``)."""
    from partsdb.device import parse_field

    spec: dict[str, Any] = {}
    for item in text.replace(",", " ").split():
        typed, sep, value = item.partition("=")
        if not sep or not value:
            raise SpecError(f"spec: {item!r} is not valid; expected name=value such as Vceo=60V")
        name = SPEC_NAMES_TYPED.get(spec_key(typed))
        if name is None:
            raise SpecError(f"spec: {typed!r} is not a spec field; expected one of "
                            + ", ".join(FIELD_BY_NAME[n].label for n in SPEC_FIELDS)
                            + " (written without spaces: Icmax=1A)")
        try:
            spec[name] = parse_field(name, value.strip())
        except ValueError as err:  # named by its label, as the user typed it
            label = FIELD_BY_NAME[name].label
            raise SpecError(f"spec: {label}: " + str(err).removeprefix(f"{name}: ")) from err
    return spec


def parse_stress(texts: Mapping[str, str]) -> Stress:
    """The circuit stress from text per stress field (``{"vce_peak": "18V"}``; blank: not given),
    each read in its row's unit (:data:`partsdb.spec_fields.STRESS_FIELDS`)."""
    from partsdb.units import UnitError, parse_quantity, parse_temperature

    values: dict[str, float] = {}
    for row in STRESS_FIELDS:
        text = (texts.get(row.name) or "").strip()
        if text:
            try:
                values[row.name] = (parse_temperature(text, row.name) if row.kind == "temperature"
                                    else read_sink(text, row.name) if row.kind == "sink"
                                    else parse_quantity(text, row.unit, row.name))
            except UnitError as err:
                raise SpecError(str(err)) from err
    return Stress.from_values(values)


REPORT_FORMATS: dict[str, str] = {".md": "md", ".html": "html", ".htm": "html"}


def write_report(result: RankResult, path: str | Path, job: str | None = None,
                 fmt: str | None = None, date: str | None = None, *, force: bool = False,
                 protect: Iterable[Path] = ()) -> Path:
    """Write the ranking report of ``result`` to ``path`` (Markdown or HTML, by ``fmt`` or by the
    file's suffix) through the one file writer (:mod:`partsdb.services.files`): an existing file
    only with ``force``, never one of ``protect`` (the open database's files), written to a
    temporary name beside it and renamed. Returns the path written."""
    from datetime import date as _date

    from partsdb.reports import render_html, render_markdown
    from partsdb.services.files import write_text

    target = Path(path).expanduser()
    kind = fmt or REPORT_FORMATS.get(target.suffix.lower())
    if kind not in ("md", "html"):
        raise SpecError(f"file: {str(path)!r} is not valid; expected a name ending in .md or "
                        ".html")
    render = render_markdown if kind == "md" else render_html
    text = render(result, job=job, date=date or _date.today().isoformat())
    write_text(target, text, force=force, protect=protect, what="report")
    return target.resolve()


def _session_of(target: Session | Database) -> Any:
    from contextlib import nullcontext

    return target.session() if isinstance(target, Database) else nullcontext(target)


def rank_substitutes(target: Session | Database, designation: str | None = None,
                     spec: Mapping[str, Any] | None = None, stress: Stress | None = None,
                     policy: Policy | str | None = None, weights: Weights | None = None, *,
                     limit: int = 15, in_stock_only: bool = False,
                     show_rejected: bool = False) -> RankResult:
    """Rank substitutes for a stored original and/or a given spec (see :func:`ranking.rank`).

    ``policy`` may be a name (built-in or from the config file); ``weights`` default to the
    config file's.
    """
    from partsdb.services.config import load_policy, load_weights

    pol = policy if isinstance(policy, Policy) else load_policy(policy)
    w = weights or load_weights()
    with _session_of(target) as session:
        from partsdb.services import fet_substitution as fets

        original = catalog_service.get_device(session, designation) if designation else None
        if original is not None and fets.is_fet(original):
            return fets.rank_fet_substitutes(session, original, spec or {}, stress or Stress(),
                                             pol, w, limit=limit, in_stock_only=in_stock_only,
                                             show_rejected=show_rejected)
        requirement = build_requirement(session, designation, spec)
        fets.check_stress_family(requirement.kind, stress or Stress(), designation)
        considered: int | None = None
        if show_rejected:
            cat = load_catalog(session)
        else:
            cat, considered = load_group(session, requirement.polarity, requirement.kind)
        qty, places = stock_columns(session, cat)
        history = swap_history(session, requirement.designation) if requirement.designation \
            else None
    result = rank(cat, requirement, stress or Stress(), pol, w, qty, history=history,
                  locations=places, limit=limit, in_stock_only=in_stock_only,
                  show_rejected=show_rejected, considered=considered)
    ambient = result.stress.ambient
    if requirement.tj_max is not None and ambient is not None and ambient >= requirement.tj_max:
        import dataclasses

        note = (f"ambient {ambient:g} °C is at or above the original's Tj max "
                f"{requirement.tj_max:g} °C: the original itself could not run there; check the "
                "figure (the air inside the case, in °C or kelvin such as 318K)")
        result = dataclasses.replace(result, notes=(*result.notes, note))
    return result


def worked_example(db: Database, command: str = "partsdb") -> str:
    """A short text of one substitution on the database (the demo shows it after building).

    Takes the first obsolete device with none in stock (by designation) for which some part in
    the drawers is a suitable or marginal substitute, and summarises the best one. ``command``
    starts the command line it shows (e.g. ``partsdb --db demo.sqlite``).
    """
    from sqlalchemy import select as _select

    from partsdb.reports import problem_lines
    from partsdb.storage.models import DeviceRow
    from partsdb.units import format_quantity

    with db.session() as session:
        cat = load_catalog(session)
        qty, places = stock_columns(session, cat)
        # Bipolar originals only: this finder ranks bipolar parts (its catalog holds no FET).
        obsolete = session.scalars(_select(DeviceRow.designation).where(DeviceRow.obsolete)
                                   .where(DeviceRow.kind.in_(KINDS))
                                   .order_by(DeviceRow.key)).all()
        originals = [d for d in obsolete if qty[cat.index[normalize(d)]] == 0] or list(obsolete)
        for original in originals:
            requirement = build_requirement(session, original)
            history = swap_history(session, original)
            result = rank(cat, requirement, Stress(), None, None, qty, history=history,
                          locations=places, limit=3, in_stock_only=True)
            best = next((c for c in result.candidates if c.verdict in ("suitable", "marginal")),
                        None)
            if best is None:
                continue
            r = requirement
            lines = [
                f"Worked example: a substitute for {original} ({r.polarity.upper()} {r.material}, "
                f"Vceo {format_quantity(r.vceo, 'V')}, Ic {format_quantity(r.ic_max, 'A')}, "
                f"Ptot {format_quantity(r.ptot, 'W')}), none left in the drawers.",
                f"  {command} substitute {original} --in-stock   ({result.policy.name} policy)",
                f"  best in stock: {best.designation}, score {best.score:.0f}, {best.verdict}, "
                f"{best.in_stock} in {', '.join(best.locations) or '—'}",
            ]
            lines += [f"  - {line}" for line in problem_lines(best.problems()[:3])]
            return "\n".join(lines)
    return "Worked example: no obsolete part with an in-stock substitute in this database."
