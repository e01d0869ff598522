"""Problems are data: each knows the file and line it came from.

Loaders and checks return problems instead of raising them one at a time, so a
user sees every mistake in one run. Only the faces (CLI, MkDocs plugin) decide
to print them and stop.
"""
from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True, order=True, slots=True)  # slots: millions of these at a managing agent's scale
class Source:
    """Where a record came from: a path (as given, relative where possible) and a 1-based line."""

    path: str
    line: int

    def __str__(self) -> str:
        # line 0 means "the file or folder as a whole" (e.g. it cannot be read)
        return f"{self.path}:{self.line}" if self.line else self.path


@dataclass(frozen=True, order=True)
class Problem:
    source: Source
    message: str

    def __str__(self) -> str:
        return f"{self.source}: {self.message}"


_ONE_LINE = str.maketrans({"\n": "\\n", "\r": "\\r", "\t": "\\t"})


class Problems(list):
    """A list of problems with a helper to add one at a source."""

    def add(self, source: Source, message: str) -> None:
        # one line per problem, whatever text from the record it quotes (found by the fuzz suite)
        self.append(Problem(source, message.translate(_ONE_LINE)))

    def sorted(self) -> list[Problem]:
        return sorted(self)
