"""Writing results to disk: a set of files appears whole, or not at all. Shell, not core.

A write stages every file in a hidden folder beside its target (same filesystem),
fsyncs them, and then commits by writing a small journal (``.workpack-swap.json``)
that names the staged files and the earlier files the set replaces. Only then are
the files moved in (``os.replace``) and the replaced ones removed. A process killed
before the journal exists leaves the folder as it was (plus a staging folder, removed
on the next write); killed after, the next writer or reader finishes the swap from
the journal, so the folder always ends holding the old set or the new one.

While a set is swapped the folder is locked (``flock`` on the folder itself, where
the platform has it): writers exclusively, readers (``reading``) shared, so a reader
never sees half a swap either.
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from collections.abc import Callable, Iterable, Iterator, Mapping
from contextlib import contextmanager
from pathlib import Path

from workpack.errors import WorkpackError

JOURNAL = ".workpack-swap.json"
STAGING_PREFIX = ".workpack-"


class OutputError(WorkpackError):
    """The output folder cannot be written."""


@contextmanager
def _locked(folder: Path, exclusive: bool) -> Iterator[bool]:
    """Hold an advisory lock on ``folder``; yields False where none could be taken
    (no flock on this platform, or the folder cannot be opened)."""
    try:
        import fcntl
    except ImportError:  # not on this platform: the journal still keeps sets whole
        yield False
        return
    try:
        handle = os.open(folder, os.O_RDONLY)
    except OSError:
        yield False
        return
    try:
        fcntl.flock(handle, fcntl.LOCK_EX if exclusive else fcntl.LOCK_SH)
        yield True
    finally:
        os.close(handle)  # closing releases the lock


def fsync_folder(folder: Path) -> None:
    """Make a folder's entries durable (a rename or a new file in it)."""
    try:
        handle = os.open(folder, os.O_RDONLY)
    except OSError:
        return  # folders cannot be opened on some platforms; the files are synced
    try:
        os.fsync(handle)
    except OSError:
        pass
    finally:
        os.close(handle)


def _finish(folder: Path, locked: bool) -> None:
    """Complete a swap a killed process committed; with the lock held, also remove
    staging folders abandoned by killed writers (without it one may be in use, and
    they are hidden and never read, so they are left).

    Idempotent: a file already moved is not moved again, one removed is not missed.
    """
    journal = folder / JOURNAL
    if journal.exists():
        try:
            plan = json.loads(journal.read_text(encoding="utf-8"))
            staging = folder / str(plan["staging"])
            moves, removes = list(plan["moves"]), list(plan["removes"])
        except (OSError, ValueError, KeyError, TypeError) as error:
            raise OutputError(f"{journal}: an interrupted write left this journal and it "
                              f"cannot be read ({error}); move it away and write again"
                              ) from None
        for name in moves:
            if (staging / name).exists():
                os.replace(staging / name, folder / name)
        for name in removes:
            if name not in moves:
                (folder / name).unlink(missing_ok=True)
        fsync_folder(folder)
        journal.unlink()
        fsync_folder(folder)
        shutil.rmtree(staging, ignore_errors=True)
    if not locked:
        return
    for entry in folder.iterdir():
        if entry.name.startswith(STAGING_PREFIX) and entry.is_dir():
            shutil.rmtree(entry, ignore_errors=True)


@contextmanager
def reading(folder: Path) -> Iterator[None]:
    """Read files of ``folder`` seeing one whole set: any interrupted swap is finished
    first, and no swap runs while the reader holds this."""
    if not folder.is_dir():
        yield
        return
    if (folder / JOURNAL).exists():
        with _locked(folder, exclusive=True) as locked:
            try:
                _finish(folder, locked)
            except OSError as error:
                raise OutputError(f"{folder}: an interrupted write could not be finished "
                                  f"({error.strerror or error})") from None
    with _locked(folder, exclusive=False):
        yield


def write_all(folder: Path, files: Mapping[str, bytes],
              replaces: Callable[[Path], Iterable[str]] | None = None) -> list[Path]:
    """Write ``files`` (name → bytes) into ``folder`` as one set: all of them, or none.

    ``replaces(folder)`` names the earlier files this set replaces; it is called with
    the folder locked and settled, and may raise to refuse the write (nothing is then
    written). Those it names and this set does not rewrite are removed in the swap.
    """
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        raise OutputError(f"{folder}: cannot write here ({error.strerror or error})") from None
    with _locked(folder, exclusive=True) as locked:
        try:
            _finish(folder, locked)
        except OSError as error:
            raise OutputError(f"{folder}: an interrupted write could not be finished "
                              f"({error.strerror or error})") from None
        old = sorted(set(replaces(folder)) - set(files)) if replaces is not None else []
        try:
            staging = Path(tempfile.mkdtemp(prefix=STAGING_PREFIX, dir=folder))
        except OSError as error:
            raise OutputError(f"{folder}: cannot write here ({error.strerror or error})"
                              ) from None
        try:
            for name in sorted(files):
                with open(staging / name, "wb") as handle:
                    handle.write(files[name])
                    handle.flush()
                    os.fsync(handle.fileno())
            _commit(folder, staging, sorted(files), old)
        except OSError as error:
            shutil.rmtree(staging, ignore_errors=True)
            raise OutputError(f"{folder}: writing failed ({error.strerror or error})"
                              ) from None
        try:
            _finish(folder, locked=False)  # our own staging folder goes with the journal
        except OSError as error:
            raise OutputError(f"{folder}: the new files are committed but could not all be "
                              f"moved in ({error.strerror or error}); the next write or "
                              "read of this folder finishes it") from None
    return [folder / name for name in sorted(files)]


def _commit(folder: Path, staging: Path, moves: list[str], removes: list[str]) -> None:
    """Write the journal atomically: from here on the new set is the folder's set."""
    text = json.dumps({"staging": staging.name, "moves": moves, "removes": removes},
                      indent=1, sort_keys=True)
    temporary = staging / JOURNAL
    with open(temporary, "w", encoding="utf-8") as handle:
        handle.write(text)
        handle.flush()
        os.fsync(handle.fileno())
    os.replace(temporary, folder / JOURNAL)
    fsync_folder(folder)
