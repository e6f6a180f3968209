"""Read a sensor log (DESIGN.md 1.1) from a file: every good row kept, every bad row named.

Raises `IngestError` only when the file cannot be read at all or its header is wrong; bad rows
become `Rejection`s with the file name and line number.
"""

from __future__ import annotations

import csv
from collections.abc import Collection, Iterator
from pathlib import Path

from frostwatch.errors import IngestError
from frostwatch.ingest.parse import LOG_COLUMNS, REQUIRED_COLUMNS, parse_log_row
from frostwatch.models import Reading, Rejection


def header_error(source: str, header: list[str], missing: list[str]) -> IngestError:
    """The error for a log whose header lacks required columns, with a hint when the header is
    one field holding semicolons or tabs: a spreadsheet's "CSV" in a locale whose decimal mark is
    a comma."""
    text = f"{source}:1: the header {','.join(header)!r} lacks {', '.join(missing) or 'valid UTF-8'}; expected {','.join(LOG_COLUMNS)}"
    if len(header) == 1 and missing:
        sep = next((name for ch, name in ((";", "semicolons"), ("\t", "tabs")) if ch in header[0]), None)
        if sep:
            text += (f" (the columns look separated by {sep}, as some spreadsheets save CSV: save the log as"
                     " comma-separated values with a point as the decimal mark, e.g. 2.5 not 2,5)")
    return IngestError(text)


def _decoded_lines(raw_lines: list[bytes], bad: set[int]) -> Iterator[str]:
    for i, b in enumerate(raw_lines, start=1):
        try:
            yield b.decode("utf-8-sig" if i == 1 else "utf-8")
        except UnicodeDecodeError:
            bad.add(i)
            yield "\n"


def parse_sensor_log_bytes(
    data: bytes, source: str, known_stations: Collection[str] | None, lines: list[int] | None = None
) -> tuple[list[Reading], list[Rejection]]:
    """Parse the bytes of a sensor log; return (readings, rejections).

    When `lines` is given, the line number of each accepted reading is appended to it.
    """
    raw_lines = data.splitlines(keepends=True)
    if not raw_lines:
        raise IngestError(f"{source}: the file is empty; expected a header line {','.join(LOG_COLUMNS)}")
    bad: set[int] = set()
    reader = csv.reader(_decoded_lines(raw_lines, bad))
    try:
        header = [h.strip().lower() for h in next(reader)]
    except csv.Error as exc:
        raise IngestError(f"{source}:1: cannot read the header: {exc}") from None
    columns = {name: i for i, name in enumerate(header) if name in LOG_COLUMNS}
    missing = [c for c in REQUIRED_COLUMNS if c not in columns]
    if 1 in bad or missing:
        raise header_error(source, header, missing)
    readings: list[Reading] = []
    rejections: list[Rejection] = []
    last_line = 1
    while True:
        try:
            fields = next(reader)
        except StopIteration:
            break
        except csv.Error as exc:
            line = reader.line_num
            rejections.append(Rejection(source, line, f"cannot split the row: {exc}", ""))
            last_line = line
            continue
        line = reader.line_num
        raw = raw_lines[line - 1].decode("utf-8", "replace").rstrip("\r\n") if line - 1 < len(raw_lines) else ""
        last_line = line
        if line in bad:
            rejections.append(Rejection(source, line, "the line is not valid UTF-8", raw))
            continue
        if not fields or all(not f.strip() for f in fields):
            continue  # a blank line is not a reading, nor an error
        r = parse_log_row(fields, columns, known_stations, source, line, raw)
        if isinstance(r, Reading):
            readings.append(r)
            if lines is not None:
                lines.append(line)
        else:
            rejections.append(r)
    del last_line
    return readings, rejections


def read_sensor_log(
    path: str | Path, known_stations: Collection[str] | None, lines: list[int] | None = None
) -> tuple[list[Reading], list[Rejection]]:
    """Read the sensor log at `path`; raise `IngestError` if it cannot be opened."""
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise IngestError(f"{p}: cannot read the sensor log: {exc.strerror or exc}") from None
    return parse_sensor_log_bytes(data, str(path), known_stations, lines)
