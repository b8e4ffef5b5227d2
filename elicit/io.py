"""Files shared by both packages: atomic writes that never leave a half-written file, with the
file mode the user's umask asks for, and the one reader of data tables (CSV and Parquet).

pandas is imported inside the reader, so that ``elicit --help`` and ``bayes --help`` stay fast.
"""

from __future__ import annotations

import contextlib
import json
import os
import re
import shutil
import tempfile
from collections.abc import Iterator, Sequence
from pathlib import Path

from elicit.errors import InputError

CSV_OPTIONS = {"skipinitialspace": True}  # pandas.read_csv options of every CSV read


# ----------------------------------------------------------------------------- writing


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def file_mode() -> int:
    """Mode of a new file under the current umask: 0o666 & ~umask (0644 under umask 022)."""
    return 0o666 & ~_umask()


def folder_mode() -> int:
    """Mode of a new folder under the current umask: 0o777 & ~umask (0755 under umask 022)."""
    return 0o777 & ~_umask()


# Our temporary names, and nothing else, are what a later run cleans up (see recover_folder):
# "<name>" stands for the folder's or file's own name, XXXXXXXX for tempfile's 8 characters.
_TEMP = r"[a-z0-9_]{8}"


@contextlib.contextmanager
def naming(target: Path) -> Iterator[None]:
    """Re-raise an OSError of the block (a temporary file beside ``target`` that cannot be made)
    as one naming ``target``, the path the user gave."""
    try:
        yield
    except OSError as e:
        raise type(e)(e.errno, e.strerror, str(target)) from None


@contextlib.contextmanager
def atomic_output(path: str | os.PathLike[str]) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; when the block ends, it replaces ``path``.

    For writers that take a file name (a figure library, an array archive): write the whole
    content to the yielded path. On success the file is synced to disk, given the mode of the
    file it replaces (or :func:`file_mode` for a new file) and renamed over ``path`` with
    :func:`os.replace` (atomic on POSIX and Windows): readers see the old file or the new one,
    never a part. On failure the temporary file is removed and ``path`` is untouched.

    The temporary name keeps ``path``'s suffix, so writers that choose a format by suffix
    choose the right one.
    """
    target = Path(path)
    with naming(target):
        remove_leftovers(target)
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=f".tmp{target.suffix}",
                                   dir=target.parent)  # fmt: skip
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        with open(tmp_path, "rb+") as handle:
            os.fsync(handle.fileno())
        mode = target.stat().st_mode & 0o777 if target.exists() else file_mode()
        os.chmod(tmp_path, mode)
        os.replace(tmp_path, target)
    except BaseException:
        tmp_path.unlink(missing_ok=True)
        raise


def temp_name(target: Path) -> re.Pattern[str]:
    """The names :func:`atomic_output` gives its temporary files beside ``target``."""
    return re.compile(rf"\.{re.escape(target.name)}\.{_TEMP}\.tmp{re.escape(target.suffix)}")


def remove_leftovers(target: Path) -> None:
    """Remove the temporary files a killed :func:`atomic_output` left beside ``target``."""
    ours = temp_name(target)
    if target.parent.is_dir():
        for p in target.parent.iterdir():
            if ours.fullmatch(p.name) and p.is_file():
                p.unlink(missing_ok=True)


def atomic_write_bytes(path: str | os.PathLike[str], content: bytes) -> None:
    """Write ``content`` to ``path`` atomically (see :func:`atomic_output`)."""
    with atomic_output(path) as tmp:
        tmp.write_bytes(content)


def atomic_write_text(path: str | os.PathLike[str], text: str, *, encoding: str = "utf-8") -> None:
    """Write ``text`` to ``path`` atomically (see :func:`atomic_output`).

    Parameters
    ----------
    path : str or path-like
        Destination file. Its folder must exist.
    text : str
        The whole new content (written as is: no newline translation).
    encoding : str, default "utf-8"
    """
    atomic_write_bytes(path, text.encode(encoding))


PARTIAL = ".partial-"  # .<name>.partial-XXXXXXXX: a new folder being written beside its place
BACKUP = ".swap-old"  # .<name>.swap-old: the old folder, aside while the new one moves in
PENDING = ".replace-pending"  # inside a folder: complete new files being renamed in
MANIFEST = "manifest.json"  # in PENDING: the names to rename in and the names to remove


def recover_folder(folder: str | os.PathLike[str], *, owned: Sequence[str] = ()) -> None:
    """Finish what a killed :func:`atomic_folder` or :func:`replace_files` left behind.

    A folder moved aside (``.<name>.swap-old``, or an older version's
    ``.<name>.old.XXXXXXXX/old``) is put back when ``folder`` is missing and removed when it
    is there; half-written new folders (``.<name>.partial-XXXXXXXX``, and an older version's
    ``.<name>.XXXXXXXX`` when every file in it is one of ``owned``) are removed; inside
    ``folder``, a complete set of new files (:data:`PENDING`) is renamed in and a half-written
    one (``.replace.XXXXXXXX``) removed. Nothing else is touched. Safe to call at any time
    when no other process is saving the same folder.
    """
    final = Path(folder)
    parent, name = final.parent, re.escape(final.name)
    backups = [parent / f".{final.name}{BACKUP}"]
    if parent.is_dir():
        old = re.compile(rf"\.{name}\.old\.{_TEMP}")
        backups += [p / "old" for p in parent.iterdir() if old.fullmatch(p.name)]
    for backup in backups:
        if backup.is_dir() and not final.exists():
            os.replace(backup, final)
        elif backup.exists():
            shutil.rmtree(backup)
        if backup.name == "old" and backup.parent.is_dir():
            shutil.rmtree(backup.parent)
    if parent.is_dir():
        partial = re.compile(rf"\.{name}{re.escape(PARTIAL)}{_TEMP}")
        legacy = re.compile(rf"\.{name}\.{_TEMP}")
        for p in parent.iterdir():
            ours = partial.fullmatch(p.name) or (
                owned and legacy.fullmatch(p.name) and p.is_dir()
                and all(f.name in owned for f in p.iterdir())
            )  # fmt: skip
            if ours and p.is_dir():
                shutil.rmtree(p)
    if final.is_dir():
        _roll_forward(final)
        stale = re.compile(rf"\.replace\.{_TEMP}")
        for p in final.iterdir():
            if stale.fullmatch(p.name) and p.is_dir():
                shutil.rmtree(p)


@contextlib.contextmanager
def atomic_folder(folder: str | os.PathLike[str]) -> Iterator[Path]:
    """Yield a new empty folder beside ``folder``; when the block ends, it takes its place.

    The folder gets :func:`folder_mode` and its files are written by the caller (each through
    the normal file API: they get :func:`file_mode`). An existing ``folder`` is renamed to
    ``.<name>.swap-old``, the new one renamed in, and the backup removed: at every moment the
    complete old folder or the complete new one is in place or, between the two renames, the
    old one is the backup, which :func:`recover_folder` (run here first, and by readers) puts
    back. On failure the new folder is removed and ``folder`` is untouched.
    """
    final = Path(folder)
    with naming(final):
        final.parent.mkdir(parents=True, exist_ok=True)
        recover_folder(final)
        tmp = Path(tempfile.mkdtemp(prefix=f".{final.name}{PARTIAL}", dir=final.parent))
    try:
        os.chmod(tmp, folder_mode())
        yield tmp  # files the caller creates in it get the umask's mode already
        if final.exists():
            backup = final.parent / f".{final.name}{BACKUP}"
            os.replace(final, backup)
            os.replace(tmp, final)
            shutil.rmtree(backup, ignore_errors=True)
        else:
            os.replace(tmp, final)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


@contextlib.contextmanager
def replace_files(
    folder: str | os.PathLike[str], *, owned: Sequence[str], last: Sequence[str] = ()
) -> Iterator[Path]:
    """Yield a new empty folder inside the existing ``folder``; when the block ends, each file
    written there replaces its namesake in ``folder`` and the rest of ``folder`` is kept.

    For a folder that holds the user's files beside the ones a tool writes (a fit folder with
    its notes, sweeps and comparisons). Each file is renamed in with :func:`os.replace`
    (atomic), the names in ``last`` after the others (the file a reader looks for first); the
    names in ``owned`` that the block did not write are removed, since they belong to what was
    replaced. ``folder`` itself is never moved or removed. On failure nothing in ``folder``
    changes and the new folder is removed. Once every new file is on disk the set is
    committed: the temporary folder, with a manifest of what to rename and remove, becomes
    :data:`PENDING`; a run killed while renaming is finished by :func:`recover_folder` (run
    here first, and by readers), so a reader never sees old and new files mixed for long.

    Parameters
    ----------
    folder : path
        An existing folder.
    owned : sequence of str
        The file names the writer owns in ``folder``; only these are replaced or removed.
    last : sequence of str
        Names renamed in after every other file.
    """
    final = Path(folder)
    with naming(final):
        recover_folder(final)
        tmp = Path(tempfile.mkdtemp(prefix=".replace.", dir=final))
    try:
        yield tmp
        written = sorted((p.name for p in tmp.iterdir() if p.is_file()),
                         key=lambda name: name in last)  # fmt: skip
        stray = [n for n in written if n not in owned]
        if stray:
            raise ValueError(f"replace_files: {stray[0]} is not one of the owned files")
        for name in written:
            with open(tmp / name, "rb+") as handle:
                os.fsync(handle.fileno())
            os.chmod(tmp / name, file_mode())
        plan = {"write": written, "remove": [n for n in owned if n not in written]}
        with open(tmp / MANIFEST, "w", encoding="utf-8") as handle:
            json.dump(plan, handle)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, final / PENDING)  # committed: from here on the set goes in
        _roll_forward(final)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def _roll_forward(folder: Path) -> None:
    """Rename the committed new files of ``folder/PENDING`` in, remove the owned files the
    set did not hold, then remove PENDING (each step can be repeated after a kill)."""
    pending = folder / PENDING
    if not pending.is_dir():
        return
    try:
        plan = json.loads((pending / MANIFEST).read_text(encoding="utf-8"))
        write, remove = list(plan["write"]), list(plan["remove"])
    except (OSError, ValueError, KeyError, TypeError):
        write, remove = [], []  # not a committed set: nothing of it has been renamed in
    for name in write:
        if Path(name).name == name and (pending / name).is_file():
            os.replace(pending / name, folder / name)
    for name in remove:
        if Path(name).name == name:
            (folder / name).unlink(missing_ok=True)
    shutil.rmtree(pending, ignore_errors=True)


# ----------------------------------------------------------------------------- reading


def read_errors() -> tuple[type[Exception], ...]:
    """The exceptions pandas raises for a file that is not a readable table."""
    import pandas as pd

    return (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError, ValueError)


def is_parquet(path: str | os.PathLike[str]) -> bool:
    """Whether ``path`` names a Parquet file (by its suffix); otherwise it is read as CSV."""
    return Path(path).suffix.lower() in (".parquet", ".pq")


def unreadable(path: str | os.PathLike[str], e: Exception) -> InputError:
    """The one-line error for a parser failure (one of :func:`read_errors`) on ``path``."""
    first = str(e).strip().splitlines()[0] if str(e).strip() else type(e).__name__
    return InputError(f"{path}: not a readable table: {first}")


def header_names(path: str | os.PathLike[str]) -> list[str]:
    """The names on the first line of a CSV file, as written (pandas renames a repeated name).

    Raises
    ------
    InputError
        When a name appears more than once.
    """
    import pandas as pd

    row = pd.read_csv(path, header=None, nrows=1, dtype=str, keep_default_na=False,
                      **CSV_OPTIONS)  # fmt: skip
    names = [str(v) for v in row.iloc[0]] if len(row) else []
    twice = sorted({n for n in names if n and names.count(n) > 1})  # pandas names blanks
    if twice:
        raise InputError(
            f"{path}: column name{'s' if len(twice) > 1 else ''} "
            f"{', '.join(repr(n) for n in twice)} appear{'' if len(twice) > 1 else 's'} more "
            "than once in the header"
        )
    return names


def parquet_numbers(frame):
    """A frame read from Parquet with decimal columns as floats and columns of numbers stored
    as text as numbers (as a CSV reader reads them); other text columns are left as they are."""
    import decimal

    import pandas as pd

    out = {}
    for c in frame.columns:
        s = frame[c]
        if s.dtype == object or pd.api.types.is_string_dtype(s):
            present = s.dropna()
            if len(present) and all(isinstance(v, decimal.Decimal) for v in present):
                out[c] = s.astype(float)
            elif len(present) and all(isinstance(v, str) for v in present):
                numbers = pd.to_numeric(present, errors="coerce")
                if numbers.notna().all():
                    out[c] = pd.to_numeric(s, errors="coerce")
    return frame.assign(**out) if out else frame


def read_table(path: str | os.PathLike[str]):
    """Read a CSV or Parquet file into a pandas DataFrame: the one table reader of both packages.

    CSV files are read with :data:`CSV_OPTIONS` (spaces after the commas are allowed); a name
    repeated in the header is an error (:func:`header_names`). Parquet decimals and numbers
    stored as text are read as numbers (:func:`parquet_numbers`).

    Raises
    ------
    InputError
        When the file is missing, not a readable table, has a repeated column name, or has no
        data rows.
    """
    import pandas as pd

    path = Path(path)
    if not path.exists():
        raise InputError(f"{path}: no such file")
    if path.is_dir():
        raise InputError(f"{path}: is a folder, not a data file")
    try:
        if is_parquet(path):
            frame = parquet_numbers(pd.read_parquet(path))
        else:
            header_names(path)
            frame = pd.read_csv(path, **CSV_OPTIONS)
    except InputError:
        raise
    except (*read_errors(), OSError) as e:
        raise unreadable(path, e) from None
    if frame.shape[1] == 0 or frame.shape[0] == 0:
        raise InputError(f"{path}: no data rows")
    return frame
