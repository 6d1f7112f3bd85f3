"""Progress of long command-line work: a bar on a terminal, plain lines otherwise, or nothing.

Work that ends within ``POURHEAT_PROGRESS_DELAY_S`` (default 1 s) shows nothing. On a terminal
the bar is tqdm's, on standard error so that standard output keeps only the result; when
standard error is not a terminal (cron, a pipe, a log file) a plain line is written at each
tenth of the work; ``--quiet`` turns both off.
"""

import os
import shutil
import sys
import time
from typing import TextIO

from tqdm import tqdm

DEFAULT_DELAY_S = 1.0
"""Work shorter than this shows no progress [s]; setting POURHEAT_PROGRESS_DELAY_S."""
LINE_STEPS = 10
"""Plain-line mode writes a line each time this fraction (1/LINE_STEPS) of the work is done."""


class ProgressDisplay:
    """A ``progress(done, total)`` callback that draws what it is told.

    ``unit`` names what is counted (``h`` of simulated time, ``forecasts``).
    """

    def __init__(
        self, label: str, unit: str, quiet: bool = False, stream: TextIO | None = None
    ) -> None:
        self.label, self.unit, self.quiet = label, unit, quiet
        self.stream = stream if stream is not None else sys.stderr
        self.delay_s = float(os.environ.get("POURHEAT_PROGRESS_DELAY_S", DEFAULT_DELAY_S))
        self.started = time.monotonic()
        self.terminal = self.stream.isatty()
        self.bar: tqdm | None = None
        self.lines_written = 0

    def __call__(self, done: float, total: float) -> None:
        if self.quiet or time.monotonic() - self.started < self.delay_s:
            return
        if self.terminal:
            self._draw_bar(done, total)
        else:
            self._write_line(done, total)

    def _draw_bar(self, done: float, total: float) -> None:
        if self.bar is None:
            size = shutil.get_terminal_size()
            self.bar = tqdm(
                total=round(total, 1),
                desc=self.label,
                unit=f" {self.unit}",
                file=self.stream,
                leave=False,
                ncols=min(size.columns, 100),
                nrows=size.lines,  # a terminal that reports 0 rows would hide the bar
                bar_format="{desc}: {percentage:3.0f}%|{bar}| {n:g}/{total:g}{unit} "
                "[{elapsed}<{remaining}]",
            )
        self.bar.total = round(total, 1)
        self.bar.update(round(done, 1) - self.bar.n)

    def _write_line(self, done: float, total: float) -> None:
        step = int(LINE_STEPS * done / total) if total > 0 else LINE_STEPS
        if step <= self.lines_written:
            return
        self.lines_written = step
        print(
            f"{self.label}: {100 * done / total:3.0f} % ({done:g} of {total:g} {self.unit}, "
            f"{time.monotonic() - self.started:.0f} s)",
            file=self.stream,
            flush=True,
        )

    def close(self) -> None:
        """Remove the bar (the result is printed next)."""
        if self.bar is not None:
            self.bar.close()
            self.bar = None
