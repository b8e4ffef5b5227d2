"""Outputs written as one set (a report's HTML, Markdown, figures and tables) and tables
written block by block. Built on the atomic writes of :mod:`elicit.io`.

A set is committed by a journal: every new file is first complete on disk under a temporary
name beside its target, then a journal naming all of them is written beside each target,
then each is renamed in and the journals removed. A run killed after the first journal is
finished by the next run that writes any of the same targets (:func:`recover_set`); one killed
before it changed nothing, and its temporary files are removed.
"""

from __future__ import annotations

import json
import os
import tempfile
from collections.abc import Mapping
from pathlib import Path

from elicit.io import file_mode, naming, remove_leftovers, temp_name

JOURNAL = ".set.json"  # .<name>.set.json beside each target of a set being renamed in


def _journal(target: Path) -> Path:
    return target.parent / f".{target.name}{JOURNAL}"


def _temp(target: Path) -> tuple[int, str]:
    """A new temporary file beside ``target``, named as :func:`elicit.io.temp_name` says."""
    return tempfile.mkstemp(prefix=f".{target.name}.", suffix=f".tmp{target.suffix}",
                            dir=target.parent)  # fmt: skip


def recover_set(targets) -> None:
    """Finish a killed :func:`write_set` that wrote any of ``targets``, then remove the
    temporary files a killed run left beside them (only our own names)."""
    for target in map(Path, targets):
        journal = _journal(target)
        if journal.is_file():
            try:
                pairs = [(Path(a), Path(b)) for a, b in json.loads(journal.read_text())["files"]]
            except (OSError, ValueError, KeyError, TypeError):
                pairs = []  # unreadable: written by the kill itself, before any rename
            for tmp, dest in pairs:
                # only our temporary file beside its own target is renamed
                if tmp.parent == dest.parent and temp_name(dest).fullmatch(tmp.name):
                    if tmp.is_file():
                        os.replace(tmp, dest)
            for _, dest in pairs:
                _journal(dest).unlink(missing_ok=True)
            journal.unlink(missing_ok=True)
        remove_leftovers(target)


def write_set(files: Mapping[Path, bytes]) -> list[Path]:
    """Write every ``path: content`` of ``files`` so that the set is replaced as a whole.

    Each file gets the mode of the file it replaces (or :func:`elicit.io.file_mode`). On an
    error before the journal nothing is replaced and the temporary files are removed.

    Returns
    -------
    list of Path
        The paths written, in the order given.
    """
    targets = [Path(p) for p in files]
    recover_set(targets)
    temps: list[tuple[Path, Path]] = []
    try:
        for target, content in zip(targets, files.values(), strict=True):
            with naming(target):
                fd, name = _temp(target)
            temps.append((Path(name), target))
            with os.fdopen(fd, "wb") as handle:
                handle.write(content)
                handle.flush()
                os.fsync(handle.fileno())
            mode = target.stat().st_mode & 0o777 if target.exists() else file_mode()
            os.chmod(name, mode)
        plan = json.dumps({"files": [[str(t.absolute()), str(d.absolute())] for t, d in temps]})
        for target in targets:  # committed from the first journal on
            journal = _journal(target)
            fd, name = _temp(target)
            with os.fdopen(fd, "w", encoding="utf-8") as handle:
                handle.write(plan)
                handle.flush()
                os.fsync(handle.fileno())
            os.replace(name, journal)
    except BaseException:
        for tmp, target in temps:
            tmp.unlink(missing_ok=True)
            _journal(target).unlink(missing_ok=True)
        raise
    for tmp, target in temps:
        os.replace(tmp, target)
    for target in targets:
        _journal(target).unlink(missing_ok=True)
    return targets


def csv_bytes(frame, *, header: bool = True) -> bytes:
    """``frame`` (without its index) as CSV, fast: pyarrow's writer (floats to full precision,
    booleans as true/false; no quotes unless a block has a value that needs them, and then
    every text value of that block is quoted), for a table written block by block.

    Parameters
    ----------
    header : bool
        Begin with the header line (the first block of a file).
    """
    import pyarrow as pa
    import pyarrow.csv as pacsv

    try:
        table = pa.Table.from_pandas(frame, preserve_index=False)
    except (pa.ArrowInvalid, pa.ArrowTypeError, pa.ArrowNotImplementedError):
        # a column of mixed objects (numbers and labels): written as its text
        mixed = frame.select_dtypes(include="object").columns
        frame = frame.assign(**{c: frame[c].map(lambda v: "" if v is None or v != v else str(v))
                                for c in mixed})  # fmt: skip
        table = pa.Table.from_pandas(frame, preserve_index=False)
    for quoting in ("none", "needed"):  # "none" refuses a value with a comma, quote or newline
        sink = pa.BufferOutputStream()
        options = pacsv.WriteOptions(include_header=header, quoting_style=quoting)
        try:
            pacsv.write_csv(table, sink, write_options=options)
        except pa.ArrowInvalid:
            continue
        break
    return sink.getvalue().to_pybytes()
