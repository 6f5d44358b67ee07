"""Progress bars for long work (plan, render, audit, import), on a terminal only.

Drawn by tqdm, a small, well-kept library, on stderr when stderr is a terminal; when it
is not (a pipe, a file, a test) nothing is drawn and tqdm is not even imported, so
output captured by scripts stays exactly what the command prints. Shell.
"""

from __future__ import annotations

import sys
from types import TracebackType
from typing import IO, Any


class Progress:
    """``Progress("planning")`` is the planner's ``progress(done, total)`` callback;
    ``Progress("audit", total=4)`` counts named stages with ``stage(name)``."""

    def __init__(self, what: str, total: int | None = None, stream: IO[str] | None = None):
        stream = sys.stderr if stream is None else stream
        self._bar: Any = None
        self._staged = False
        if _is_terminal(stream):
            from tqdm import tqdm

            self._bar = tqdm(total=total, desc=what, file=stream, leave=False,
                             dynamic_ncols=True, mininterval=0.1)

    def __call__(self, done: int, total: int) -> None:
        if self._bar is None:
            return
        self._bar.total = total
        self._bar.update(done - self._bar.n)
        if done >= total:
            self.close()

    def stage(self, name: str) -> None:
        """Now doing ``name``: the stage before it is done."""
        if self._bar is not None:
            if self._staged:
                self._bar.update(1)
            self._staged = True
            self._bar.set_postfix_str(name)

    def close(self) -> None:
        if self._bar is not None:
            if self._staged and self._bar.total:
                self._bar.update(self._bar.total - self._bar.n)  # the last stage is done
            self._bar.refresh()  # the last state, even if it came sooner than mininterval
            self._bar.close()
            self._bar = None

    def __enter__(self) -> Progress:
        return self

    def __exit__(self, kind: type[BaseException] | None, error: BaseException | None,
                 trace: TracebackType | None) -> None:
        self.close()


def _is_terminal(stream: IO[str]) -> bool:
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):  # a closed or odd stream: no bar
        return False
