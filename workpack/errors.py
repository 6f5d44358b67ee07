"""Errors a user can cause, and how they are reported.

The tree::

    WorkpackError            exit status 2, caught once in the command line
     └── InputError          one or more problems, each tied to file:line:col

Every message says what was found and what was expected; where a name was
misspelled it offers the nearest known names. A traceback means a bug in
workpack, never a mistake in the user's files.
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Iterable
from dataclasses import dataclass

# Characters that would break a message's one line or reorder what a terminal shows:
# C0 and C1 controls, Unicode line and paragraph separators, bidirectional overrides.
_UNSAFE = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")
_ESCAPES = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}
# A message longer than this is shortened in the middle, saying how much was left out.
MAX_MESSAGE = 1000


def one_line(text: str) -> str:
    """``text`` as one printable line: control characters escaped, length bounded.

    Messages quote what was found, and what was found may hold a newline copied
    from the input: printed raw it would split one problem over two lines.
    """
    text = _UNSAFE.sub(lambda found: _ESCAPES.get(found.group(), found.group()
                                                  .encode("unicode_escape").decode("ascii")),
                       text)
    if len(text) > MAX_MESSAGE:
        left_out = len(text) - MAX_MESSAGE
        text = (text[: MAX_MESSAGE // 2] + f" … ({left_out:,} characters left out) … "
                + text[-MAX_MESSAGE // 2:])
    return text


@dataclass(frozen=True, order=True)
class Problem:
    """One thing wrong with an input, at a place a person can find."""

    file: str
    line: int  # 1-based; 0 when the place is the whole file
    column: int  # 1-based; 0 when unknown
    path: str  # dotted field path such as "loads[3].rated_kw", or ""
    message: str

    def format(self) -> str:
        place = self.file
        if self.line:
            place += f":{self.line}"
            if self.column:
                place += f":{self.column}"
        field = f" {self.path}:" if self.path else ""
        return one_line(f"{place}:{field} {self.message}")


class WorkpackError(Exception):
    """Root of every error a user can cause; the CLI prints it and exits."""

    exit_code = 2

    def format_message(self) -> str:
        return one_line(str(self))


class InputError(WorkpackError):
    """An input file (or option) is wrong; carries every problem found in one pass."""

    def __init__(self, problems: Iterable[Problem]):
        self.problems = sorted(set(problems))
        super().__init__("\n".join(p.format() for p in self.problems))

    def format_message(self) -> str:
        return "\n".join(p.format() for p in self.problems)


class UsageError(WorkpackError):
    """A command-line option is wrong; the message names the option."""


def did_you_mean(word: str, known: Iterable[str]) -> str:
    """A ' (did you mean X?)' suffix, or '' when nothing known is close."""
    close = difflib.get_close_matches(word, sorted(known), n=3, cutoff=0.6)
    if not close:
        return ""
    return " (did you mean " + " or ".join(repr(c) for c in close) + "?)"
