"""Writing results to disk: every file complete or not there at all.

Files are written into a temporary folder beside the output folder, then
moved into place one by one with ``os.replace`` (atomic on one filesystem),
so a crash or an error leaves no half-written file behind. Shell, not core.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from collections.abc import Callable, Mapping
from pathlib import Path

from workpack.errors import WorkpackError


class OutputError(WorkpackError):
    """The output folder cannot be written."""


def write_all(folder: Path, files: Mapping[str, bytes],
              replaces: Callable[[str], bool] | None = None) -> list[Path]:
    """Write ``files`` (name → bytes) into ``folder``; all complete, or none moved in.

    ``replaces`` names the files an earlier run of the same kind left there: once the
    new files are in place, those not written again are removed, so the folder holds
    one consistent set (a re-plan never leaves yesterday's extra packages behind)."""
    try:
        folder.mkdir(parents=True, exist_ok=True)
        staging = Path(tempfile.mkdtemp(prefix=".workpack-", dir=folder))
    except OSError as error:
        raise OutputError(f"{folder}: cannot write here ({error.strerror or error})") from None
    written: list[Path] = []
    try:
        for name in sorted(files):
            staged = staging / name
            with open(staged, "wb") as handle:
                handle.write(files[name])
                handle.flush()
                os.fsync(handle.fileno())
        for name in sorted(files):
            target = folder / name
            os.replace(staging / name, target)
            written.append(target)
        if replaces is not None:
            for old in sorted(folder.iterdir()):
                if old.is_file() and replaces(old.name) and old.name not in files:
                    old.unlink()
    except OSError as error:
        raise OutputError(f"{folder}: writing failed ({error.strerror or error})") from None
    finally:
        shutil.rmtree(staging, ignore_errors=True)
    return written
