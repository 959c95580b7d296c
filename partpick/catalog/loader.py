"""Read a catalogue folder into typed pandas DataFrames, or report every problem.

The reader keeps each record's physical line number, so a problem is always
named as ``file:line: column: reason``. Nothing is chosen from an invalid
catalogue: :func:`load_catalog` raises :class:`~partpick.errors.InputError`
carrying every problem of every file at once.
"""

from __future__ import annotations

import codecs
import csv
import functools
import hashlib
import math
from collections.abc import Iterator
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Annotated, Any, BinaryIO

import pandas as pd
from pydantic import TypeAdapter, ValidationError

from partpick.catalog.rows import FILES, Row
from partpick.errors import InputError, Problem

#: Largest catalogue file read [bytes]; larger files are refused, not loaded.
MAX_FILE_BYTES = 256 * 1024 * 1024
#: Most lines read from one file (comments included); a longer file is refused
#: with a message before any row is parsed, not loaded until memory runs out (a
#: medium-sized parametric export has ~20,000 rows).
MAX_LINES = 500_000
#: Bytes that end a line for ``str.splitlines`` once UTF-8 encoded (CR LF counts once).
_LINE_ENDS = (b"\n", b"\r", b"\x0b", b"\x0c", b"\x1c", b"\x1d", b"\x1e", b"\xc2\x85", b"\xe2\x80\xa8", b"\xe2\x80\xa9")
#: Largest cell [characters].
MAX_CELL_CHARS = 4096

#: Most part names one catalogue-wide warning lists; the rest are counted (a
#: large export can leave thousands of rows without offers or SOA curves).
LISTED_MAX = 10

PART_FILES = ("transistors.csv", "opamps.csv", "regulators.csv", "heatsinks.csv", "diodes.csv")


@dataclass
class Catalog:
    """A validated catalogue: one DataFrame per category, columns as in the CSV files.

    Every frame carries ``line``, the physical line of the row in its file.
    ``transistors`` also carries ``soa_v`` and ``soa_a`` (tuples of the parsed
    DC SOA breakpoints, empty when none were given).
    """

    folder: str
    transistors: pd.DataFrame
    opamps: pd.DataFrame
    regulators: pd.DataFrame
    heatsinks: pd.DataFrame
    passives: pd.DataFrame
    diodes: pd.DataFrame
    suppliers: pd.DataFrame
    offers: pd.DataFrame
    file_sha256: dict[str, str] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)

    @property
    def currency(self) -> str:
        return str(self.suppliers["currency"].iloc[0]) if len(self.suppliers) else ""


def demo_catalog_dir() -> Path:
    """The demo catalogue shipped inside the package."""
    return Path(str(resources.files("partpick") / "data" / "catalog"))


def default_catalog_dir() -> Path:
    """``./catalog`` when it exists, else the shipped demo catalogue (formats.md)."""
    local = Path("catalog")
    return local if local.is_dir() else demo_catalog_dir()


def load_catalog(folder: str | Path) -> Catalog:
    """Load and validate every file of a catalogue folder.

    A catalogue loaded before, with every file byte for byte the same, comes
    from partpick's cache (:mod:`partpick.catalog.cache`).

    Raises
    ------
    InputError
        Listing every problem found, each with file, line, column and reason.
    """
    folder = Path(folder)
    problems: list[Problem] = []
    if not folder.is_dir():
        raise InputError([Problem(str(folder), 0, "", "catalogue folder not found")])
    from partpick.catalog import cache

    prints = _fingerprints(folder)
    name_of = None
    if prints is not None:
        digests = {name: digest for name, (digest, _lines) in prints.items()}
        name_of = cache.key(folder, digests)
        kept = cache.get(name_of)
        if isinstance(kept, Catalog) and kept.file_sha256 == digests:
            kept.folder = str(folder)  # as this run names it
            return kept
    frames: dict[str, pd.DataFrame] = {}
    hashes: dict[str, str] = {}
    for name, model in FILES.items():
        path = folder / name
        rows, file_problems, digest = _read_file(path, model, None if prints is None else prints[name])
        problems.extend(file_problems)
        hashes[name] = digest
        frames[name] = _frame(rows, model)
    if problems:
        # Cross-file checks on half-read files would only add noise.
        raise InputError(problems)
    warnings: list[str] = []
    problems.extend(_cross_checks(folder, frames, warnings))
    if problems:
        raise InputError(problems)
    _attach_soa(frames["transistors.csv"])
    catalog = Catalog(
        folder=str(folder),
        transistors=frames["transistors.csv"],
        opamps=frames["opamps.csv"],
        regulators=frames["regulators.csv"],
        heatsinks=frames["heatsinks.csv"],
        passives=frames["passives.csv"],
        diodes=frames["diodes.csv"],
        suppliers=frames["suppliers.csv"],
        offers=frames["offers.csv"],
        file_sha256=hashes,
        warnings=warnings,
    )
    if name_of is not None:
        cache.put(name_of, catalog)
    return catalog


def _fingerprints(folder: Path) -> dict[str, tuple[str, int]] | None:
    """Every file's (sha256, line count) when each can be read whole (:func:`_read_file`'s limits); else None.

    The catalogue's name in the cache (:mod:`partpick.catalog.cache`); a
    folder with a missing or oversized file is read as usual, to report it.
    """
    out = {}
    for name in FILES:
        path = folder / name
        if not path.is_file() or path.stat().st_size > MAX_FILE_BYTES:
            return None
        out[name] = _fingerprint(path)
        if out[name][1] > MAX_LINES:
            return None
    return out


# --------------------------------------------------------------------------- reading


class _Unreadable(Exception):
    """A whole-file problem met while streaming a file (not UTF-8 text, a NUL)."""

    def __init__(self, line: int, reason: str):
        super().__init__(reason)
        self.line, self.reason = line, reason


def _read_file(path: Path, model: type[Row], fingerprint: tuple[str, int] | None = None) -> tuple[list[tuple], list[Problem], str]:
    """Rows of one file (tuples: line, then the model's fields), its problems and its sha256.

    The file is never held whole: a first pass hashes it and counts its lines
    in fixed-size chunks, and a file of more than :data:`MAX_LINES` lines is
    refused there, before any row is parsed; the second pass parses one line
    at a time. Memory stays bounded whatever the file's size.
    ``fingerprint``: that first pass's (sha256, lines), when the caller has it.
    """
    label = str(path)
    if not path.is_file():
        return [], [Problem(label, 0, "", "file is missing")], ""
    size = path.stat().st_size
    if size > MAX_FILE_BYTES:
        reason = f"file is {size / 2**20:.0f} MiB; partpick reads at most {MAX_FILE_BYTES // 2**20} MiB"
        return [], [Problem(label, 0, "", reason)], ""
    digest, lines = fingerprint if fingerprint is not None else _fingerprint(path)
    if lines > MAX_LINES:
        reason = (f"file has {lines} lines; partpick reads at most {MAX_LINES} lines per file "
                  "(split the catalogue or filter it)")
        return [], [Problem(label, 0, "", reason)], digest
    with path.open("rb") as fh:
        try:
            rows, problems = _parse(label, _records(_text_lines(fh)), model)
        except _Unreadable as exc:
            return [], [Problem(label, exc.line, "", exc.reason)], digest
    return rows, problems, digest


def _fingerprint(path: Path, chunk_bytes: int = 1 << 20) -> tuple[str, int]:
    """The sha256 of a file and an upper bound of its line count, read in chunks.

    A line break split across two chunks may go uncounted (at most one per
    mebibyte); the count only guards :data:`MAX_LINES`.
    """
    digest, breaks, last = hashlib.sha256(), 0, b""
    with path.open("rb") as fh:
        while chunk := fh.read(chunk_bytes):
            digest.update(chunk)
            breaks += sum(chunk.count(end) for end in _LINE_ENDS) - chunk.count(b"\r\n")
            last = chunk[-1:]
    unterminated = 1 if last and not any(end.endswith(last) for end in _LINE_ENDS) else 0
    return digest.hexdigest(), breaks + unterminated


def _parse(
    label: str, records: Iterator[tuple[int, list[str] | str]], model: type[Row]
) -> tuple[list[tuple], list[Problem]]:
    """Validate the records of one file: the header, then every row against ``model``."""
    first = next(records, None)
    if first is None:
        return [], [Problem(label, 0, "", "file is empty: a header row is required")]
    header_line, header = first
    if isinstance(header, str):
        return [], [Problem(label, header_line, "", header)]
    header = [h.strip() for h in header]
    problems = _header_problems(label, header_line, header, model)
    if problems:
        return [], problems
    rows: list[tuple] = []
    cells_of = _CellReader(header, model)
    for line, cells in records:
        problems.extend(_row(label, line, header, cells, model, rows, cells_of))
    return rows, problems


def _row(
    label: str, line: int, header: list[str], cells: list[str] | str, model: type[Row], rows: list[tuple],
    cells_of: _CellReader | None = None,
) -> list[Problem]:
    """Validate one record; a valid row is appended to ``rows`` (line, then its fields), else its problems are returned.

    ``cells_of`` (a :class:`_CellReader` of this file) reads a record whose
    every cell is valid; any other record goes through ``model`` whole, which
    names each of its problems.
    """
    if isinstance(cells, str):
        return [Problem(label, line, "", cells)]
    if len(cells) != len(header):
        return [Problem(label, line, "", f"has {len(cells)} cells, the header has {len(header)}")]
    long_cells = [h for h, c in zip(header, cells) if len(c) > MAX_CELL_CHARS]
    if long_cells:
        return [Problem(label, line, h, f"cell longer than {MAX_CELL_CHARS} characters") for h in long_cells]
    values = cells_of.values(cells) if cells_of is not None else None
    if values is not None:
        rows.append((line, *values))
        return []
    record = dict(zip(header, cells))
    try:
        rows.append((line, *model.model_validate(record).model_dump().values()))
    except ValidationError as exc:
        return _validation_problems(label, line, record, exc, model)
    return []


_UNSEEN = object()
_INVALID = object()


class _CellReader:
    """One file's cells read column by column, each distinct cell of a column validated once.

    A row model has no rule that ties two columns (every check is one
    field's own validators, see :mod:`partpick.catalog.rows`), so a record
    whose every cell passes its field's validators alone is the record the
    model accepts, with the same values; a column absent from the header
    takes the field's default, as in the model. A model that gains a rule
    over several columns (a ``model_validator``) is read whole, row by row.
    Catalogue columns repeat their cells (suppliers, quantities, prices,
    packages), so most cells are a dictionary lookup instead of a
    validation.
    """

    def __init__(self, header: list[str], model: type[Row]):
        at = {name: i for i, name in enumerate(header)}
        self.columns: list[tuple[int, Any, TypeAdapter, dict[str, Any]]] = []
        # A rule over the whole record (a model validator) needs the model: then every record goes through it.
        self.complete = not model.__pydantic_decorators__.model_validators
        for name, info in model.model_fields.items():
            if name not in at and info.is_required():
                self.complete = False
            self.columns.append((at.get(name, -1), info.get_default(), _field_adapter(model, name), {}))

    def values(self, cells: list[str]) -> tuple | None:
        """The row's field values in the model's order, or None when some cell is not valid."""
        if not self.complete:
            return None
        out = []
        for pos, default, adapter, seen in self.columns:
            if pos < 0:
                out.append(default)
                continue
            cell = cells[pos]
            value = seen.get(cell, _UNSEEN)
            if value is _UNSEEN:
                try:
                    value = adapter.validate_python(cell)
                except ValidationError:
                    value = _INVALID
                seen[cell] = value
            if value is _INVALID:
                return None
            out.append(value)
        return tuple(out)


@functools.lru_cache(maxsize=None)
def _field_adapter(model: type[Row], name: str) -> TypeAdapter:
    """The validators of one field of ``model`` on their own."""
    info = model.model_fields[name]
    return TypeAdapter(Annotated[(info.annotation, *info.metadata)])


def _text_lines(fh: BinaryIO) -> Iterator[tuple[int, str]]:
    """The lines of a binary file as text, with their 1-based numbers, read one at a time.

    Line breaks are those of ``str.splitlines`` (LF, CRLF, a lone CR, ...); a
    UTF-8 byte-order mark at the start is dropped.

    Raises
    ------
    _Unreadable
        At the first line that is not UTF-8 or holds a NUL character.
    """
    number = 0
    for raw in fh:
        if number == 0:
            raw = raw.removeprefix(codecs.BOM_UTF8)
        try:
            text = raw.decode("utf-8")
        except UnicodeDecodeError as exc:
            where = number + len((raw[: exc.start].decode("utf-8") + "x").splitlines())
            raise _Unreadable(where, f"not UTF-8 text (byte 0x{raw[exc.start]:02x})") from None
        if "\x00" in text:
            where = number + len((text[: text.index("\x00")] + "x").splitlines())
            raise _Unreadable(where, "contains a NUL character: not a text file")
        for part in text.splitlines():
            number += 1
            yield number, part


def _records(numbered: Iterator[tuple[int, str]]) -> Iterator[tuple[int, list[str] | str]]:
    """CSV records with their physical line; ``#`` lines and blank lines skipped.

    A record the CSV reader cannot parse comes as its error message (a str).
    A record spanning several lines (a quoted cell with a line break, or an
    unclosed quote) is named by the line it starts on.
    """
    state: dict[str, int | None] = {"start": None}

    def lines() -> Iterator[str]:
        for number, line in numbered:
            if not line.strip() or line.lstrip().startswith("#"):
                continue
            if state["start"] is None:
                state["start"] = number
            yield line

    reader = csv.reader(lines(), strict=True)
    while True:
        try:
            cells = next(reader)
        except StopIteration:
            return
        except csv.Error as exc:
            start, state["start"] = state["start"], None
            yield int(start or 0), f"unreadable CSV: {exc}"
            continue
        start, state["start"] = state["start"], None
        yield int(start or 0), cells


def _header_problems(label: str, line: int, header: list[str], model: type[Row]) -> list[Problem]:
    if len(header) == 1 and ";" in header[0]:
        return [
            Problem(
                label,
                line,
                "",
                "looks semicolon-separated; partpick reads comma-separated files "
                "(save the sheet as CSV with ',' as the separator)",
            )
        ]
    problems = []
    seen: set[str] = set()
    for name in header:
        if name in seen:
            problems.append(Problem(label, line, name, "column appears twice in the header"))
        seen.add(name)
    for name, info in model.model_fields.items():
        if info.is_required() and name not in seen:
            problems.append(Problem(label, line, name, "required column is missing"))
    return problems


def _validation_problems(
    label: str, line: int, record: dict[str, str], exc: ValidationError, model: type[Row]
) -> list[Problem]:
    out = []
    for err in exc.errors():
        column = str(err["loc"][0]) if err["loc"] else ""
        cell = record.get(column, "")
        if err["type"] == "missing" or (not str(cell).strip() and column in model.model_fields):
            reason = "required value is missing"
        else:
            reason = _clean_message(err)
        out.append(Problem(label, line, column, reason))
    return out


def _clean_message(err: dict) -> str:
    msg = str(err["msg"])
    for prefix in ("Value error, ", "Assertion failed, "):
        if msg.startswith(prefix):
            msg = msg[len(prefix) :]
    if err["type"] == "literal_error":
        msg = f"'{err['input']}' is not allowed: {msg[0].lower()}{msg[1:]}"
    return msg


def _frame(rows: list[tuple], model: type[Row]) -> pd.DataFrame:
    frame = pd.DataFrame.from_records(rows, columns=["line", *model.model_fields])
    for name, info in model.model_fields.items():
        if info.annotation in (float,) or "float" in str(info.annotation):
            frame[name] = pd.to_numeric(frame[name], errors="coerce").astype(float)
    return frame


# --------------------------------------------------------------------------- cross-file checks


def _cross_checks(folder: Path, frames: dict[str, pd.DataFrame], warnings: list[str]) -> list[Problem]:
    problems: list[Problem] = []
    path = {name: str(folder / name) for name in frames}

    # One mpn space across all part files and passive families.
    first_seen: dict[str, str] = {}
    for name in (*PART_FILES, "passives.csv"):
        key = "family" if name == "passives.csv" else "mpn"
        for line, mpn in zip(frames[name]["line"].tolist(), frames[name][key].tolist()):
            if mpn in first_seen:
                problems.append(
                    Problem(path[name], int(line), key, f"'{mpn}' already used in {first_seen[mpn]}")
                )
            else:
                first_seen[mpn] = f"{name} line {line}"

    problems.extend(_transistor_checks(path["transistors.csv"], frames["transistors.csv"]))
    problems.extend(_range_checks(path, frames))

    sup = frames["suppliers.csv"]
    seen_sup: set[str] = set()
    for line, s in zip(sup["line"].tolist(), sup["supplier"].tolist()):
        if s in seen_sup:
            problems.append(Problem(path["suppliers.csv"], int(line), "supplier", f"'{s}' listed twice"))
        seen_sup.add(s)
    currencies = sorted(set(sup["currency"]))
    if len(currencies) > 1:
        line = int(sup.loc[sup["currency"] != sup["currency"].iloc[0], "line"].iloc[0])
        problems.append(
            Problem(
                path["suppliers.csv"],
                line,
                "currency",
                f"suppliers use several currencies ({', '.join(currencies)}); one run needs one",
            )
        )
    if sup.empty:
        problems.append(Problem(path["suppliers.csv"], 0, "", "no supplier listed"))

    off = frames["offers.csv"]
    seen_break: set[tuple[str, str, int]] = set()
    for line, mpn, s, q in zip(off["line"].tolist(), off["mpn"].tolist(), off["supplier"].tolist(), off["min_qty"].tolist()):
        if mpn not in first_seen:
            problems.append(Problem(path["offers.csv"], int(line), "mpn", f"unknown part or family '{mpn}'"))
        if s not in seen_sup:
            problems.append(Problem(path["offers.csv"], int(line), "supplier", f"unknown supplier '{s}'"))
        key = (mpn, s, int(q))
        if key in seen_break:
            problems.append(
                Problem(path["offers.csv"], int(line), "min_qty", f"price break {q} of '{mpn}' at '{s}' listed twice")
            )
        seen_break.add(key)

    offered = set(off["mpn"].tolist())
    for name in (*PART_FILES, "passives.csv"):
        key = "family" if name == "passives.csv" else "mpn"
        missing = [m for m in frames[name][key].tolist() if m not in offered]
        if missing:
            what = "families" if key == "family" else "parts"
            warnings.append(f"{name}: no offer for {len(missing):,} {what} ({listed(missing)}): these cannot be chosen")
    from partpick.catalog.plausibility import plausibility_warnings

    warnings.extend(plausibility_warnings(str(folder), frames))
    no_soa = frames["transistors.csv"].loc[frames["transistors.csv"]["soa_dc"].isna(), "mpn"]
    if len(no_soa):
        warnings.append(
            f"transistors.csv: no second-breakdown data (soa_dc) for {len(no_soa):,} transistors "
            f"({listed(no_soa.tolist())}): their SOA is the Ic/Pd/Vceo boundary only"
        )
    return problems


def listed(names: list[str]) -> str:
    """``names`` for a warning: the first :data:`LISTED_MAX`, then how many more (``"A, B and 12 more"``)."""
    rest = len(names) - LISTED_MAX
    shown = ", ".join(names[:LISTED_MAX])
    return shown if rest <= 0 else f"{shown} and {rest:,} more"


def _transistor_checks(label: str, tr: pd.DataFrame) -> list[Problem]:
    problems = []
    polarity = dict(zip(tr["mpn"], tr["polarity"]))
    for row in tr.itertuples(index=False):
        line = int(row.line)
        if isinstance(row.complement, str):
            if row.complement not in polarity:
                problems.append(Problem(label, line, "complement", f"unknown transistor '{row.complement}'"))
            elif polarity[row.complement] == row.polarity:
                problems.append(
                    Problem(label, line, "complement", f"'{row.complement}' is also {row.polarity}, not its complement")
                )
        if row.vce_sat_v >= row.vceo_v:
            problems.append(Problem(label, line, "vce_sat_v", "is not below vceo_v"))
        if row.tj_max_c <= 25.0:
            problems.append(Problem(label, line, "tj_max_c", "must be above 25 degC"))
        if isinstance(row.soa_dc, str):
            try:
                volts, _amps = _soa_points(row.soa_dc)
            except ValueError as exc:
                problems.append(Problem(label, line, "soa_dc", str(exc).removeprefix("soa_dc: ")))
                continue
            if volts[-1] > row.vceo_v * (1 + 1e-9):
                problems.append(Problem(label, line, "soa_dc", f"goes beyond vceo_v ({row.vceo_v:g} V)"))
    return problems


def _range_checks(path: dict[str, str], frames: dict[str, pd.DataFrame]) -> list[Problem]:
    problems = []
    for row in frames["opamps.csv"].itertuples(index=False):
        if row.supply_min_v >= row.supply_max_v:
            problems.append(Problem(path["opamps.csv"], int(row.line), "supply_max_v", "is not above supply_min_v"))
    for row in frames["regulators.csv"].itertuples(index=False):
        if row.kind == "fixed" and _missing(row.vout_v):
            problems.append(Problem(path["regulators.csv"], int(row.line), "vout_v", "a fixed regulator needs vout_v"))
        if row.kind == "adjustable" and _missing(row.vref_v):
            problems.append(
                Problem(path["regulators.csv"], int(row.line), "vref_v", "an adjustable regulator needs vref_v")
            )
    for row in frames["passives.csv"].itertuples(index=False):
        label, line = path["passives.csv"], int(row.line)
        if row.value_min > row.value_max:
            problems.append(Problem(label, line, "value_max", "is below value_min"))
        if row.kind == "resistor" and _missing(row.power_w):
            problems.append(Problem(label, line, "power_w", "a resistor family needs power_w"))
        if row.kind != "resistor" and _missing(row.voltage_v):
            problems.append(Problem(label, line, "voltage_v", "a capacitor family needs voltage_v"))
    for row in frames["heatsinks.csv"].itertuples(index=False):
        if not [p for p in row.packages.split(";") if p.strip()]:
            problems.append(Problem(path["heatsinks.csv"], int(row.line), "packages", "names no package"))
    return problems


def _missing(x: object) -> bool:
    return x is None or (isinstance(x, float) and math.isnan(x))


def _attach_soa(tr: pd.DataFrame) -> None:
    parsed = [_soa_points(s) if isinstance(s, str) else ((), ()) for s in tr["soa_dc"].tolist()]
    tr["soa_v"] = [p[0] for p in parsed]
    tr["soa_a"] = [p[1] for p in parsed]


@functools.lru_cache(maxsize=1 << 14)
def _soa_points(text: str) -> tuple[tuple[float, ...], tuple[float, ...]]:
    """:func:`~partpick.model.soa.parse_soa_dc` as tuples of floats, once per distinct cell (catalogue rows share curves)."""
    from partpick.model.soa import parse_soa_dc

    volts, amps = parse_soa_dc(text)
    return tuple(float(v) for v in volts), tuple(float(a) for a in amps)
