"""A progress bar for long measure runs: rich on a terminal's stderr, silent everywhere else."""
from __future__ import annotations

import sys
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any, Protocol, TextIO

MIN_TOTAL = 2  #: a single finding measures too fast for a bar to help


class Ticker(Protocol):
    def advance(self, steps: int = 1) -> None: ...


class _Silent:
    """The no-op used for pipes, files, CI logs and tiny runs."""

    def advance(self, steps: int = 1) -> None:
        return None


class _Bar:
    def __init__(self, bar: Any, task: Any) -> None:
        self._bar, self._task = bar, task

    def advance(self, steps: int = 1) -> None:
        self._bar.advance(self._task, steps)


def wanted(stream: TextIO | None, total: int) -> bool:
    """Show a bar only when the stream is a terminal and there is more than one step.

    NO_COLOR is not consulted: it asks for no colour, and a bar is not colour (the bar honours
    it itself by drawing without colour).
    """
    isatty = getattr(stream, "isatty", None)
    return total >= MIN_TOTAL and callable(isatty) and bool(isatty())


@contextmanager
def progress(total: int, label: str, stream: TextIO | None = None) -> Iterator[Ticker]:
    """`with progress(n, "measuring") as bar: ... bar.advance()`; the bar is removed when done."""
    stream = sys.stderr if stream is None else stream
    if not wanted(stream, total):
        yield _Silent()
        return
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    console = Console(file=stream, force_terminal=True)
    columns = (TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn())
    with Progress(*columns, console=console, transient=True) as bar:
        yield _Bar(bar, bar.add_task(label, total=total))
