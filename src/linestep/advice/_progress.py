"""Progress of an `advise` study: a tqdm bar, a line per tenth of the runs, or a callback."""

from __future__ import annotations

import sys
from typing import Any

__all__ = ["close", "reporter", "shifted"]


class _TextBar:
    """A line per tenth of the runs on stderr (when tqdm is not installed)."""

    def __init__(self, total: int) -> None:
        self.total, self.tenth = total, -1

    def update(self, done: int, total: int) -> None:
        self.total = total
        tenth = 10 * done // max(self.total, 1)
        if tenth > self.tenth:
            self.tenth = tenth
            print(f"linestep advise: {done}/{self.total} runs", file=sys.stderr)

    def close(self) -> None:
        pass


class _TqdmBar:
    def __init__(self, total: int) -> None:
        from tqdm import tqdm

        self.bar = tqdm(total=total, desc="linestep advise", unit="run", leave=False)

    def update(self, done: int, total: int) -> None:
        if total != self.bar.total:
            self.bar.total = total
        self.bar.update(done - self.bar.n)

    def close(self) -> None:
        self.bar.close()


def reporter(progress: Any, total: int) -> Any:
    """What `advise(progress=...)` asks for: None (silent), the user's callable, or a bar
    (tqdm when installed, else text lines; by default only on a terminal)."""
    if progress is False:
        return None
    if callable(progress) and progress is not True:
        return progress
    try:
        import tqdm  # noqa: F401
        has_tqdm = True
    except ImportError:
        has_tqdm = False
    if progress is None and not (has_tqdm and sys.stderr.isatty()):
        return None
    return _TqdmBar(total) if has_tqdm else _TextBar(total)


def shifted(report: Any, offset: int, total: int, done: int, _: int, record: Any) -> None:
    """Pass a round's progress on, counted from the runs of the earlier rounds."""
    if isinstance(report, (_TqdmBar, _TextBar)):
        report.update(offset + done, total)
    else:
        report(offset + done, total, record)


def close(report: Any) -> None:
    """Close a bar (a user's callable needs nothing)."""
    if isinstance(report, (_TqdmBar, _TextBar)):
        report.close()
