"""Progress of a sweep on stderr, through rich."""

from __future__ import annotations

import sys


class Progress:
    """A progress bar on stderr (rich), drawn only when stderr is a terminal or when asked.

    ``update(done)`` sets the points finished; ``close()`` ends the line.  rich
    is imported only when a bar is drawn, so that a sweep in a script or a
    worker costs nothing here.
    """

    def __init__(self, total: int, what: str, enabled: bool | None):
        self.enabled = sys.stderr.isatty() if enabled is None else bool(enabled)
        self.total, self.done = total, 0
        self._bar = None
        if self.enabled:
            from rich.console import Console
            from rich.progress import (BarColumn, MofNCompleteColumn, Progress as RichProgress, TextColumn,
                                       TimeRemainingColumn)

            self._bar = RichProgress(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
                                     TextColumn("points"), TimeRemainingColumn(),
                                     console=Console(file=sys.stderr), transient=False)
            self._task = self._bar.add_task(what, total=total)
            self._bar.start()

    def update(self, done: int) -> None:
        self.done = done
        if self._bar is not None:
            self._bar.update(self._task, completed=done)

    def close(self) -> None:
        if self._bar is not None:
            self._bar.stop()
            self._bar = None
