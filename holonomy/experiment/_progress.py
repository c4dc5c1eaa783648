"""One progress bar per command: the run's name, blocks done of total, elapsed and
remaining time (tqdm, on stderr).

A command makes one :class:`Progress` and hands it to every run it starts; each run
announces itself with :meth:`Progress.stage` (its name and block count) and ticks
:meth:`Progress.update` per finished block. The bar therefore never restarts at 0 %,
and between runs it says what is being computed (:meth:`Progress.step`), so the
command is never silent for long.
"""

from __future__ import annotations

import sys

__all__ = ["Progress"]

_FORMAT = ("{desc}: {n_fmt}/{total_fmt} {unit}s |{bar}| {percentage:3.0f}% "
           "[{elapsed} elapsed, {remaining} left]")


class Progress:
    """A progress bar shared by the runs of one command.

    Parameters
    ----------
    total : int, optional
        The command's total number of blocks when known up front (the demo); otherwise
        each :meth:`stage` adds its blocks.
    enabled : bool
        False makes every method a no-op (``--quiet``, ``--json``, not a terminal).
    unit : str
        What is counted (``"block"``; the series command counts parts: per loop the
        scheme's series and the continuum series).
    header : str, optional
        The command's start line, printed on stderr (whether or not the bar is
        enabled) when the first run starts: after the spec, the output folder and the
        store have passed their checks, so a refusal is the only line on stderr.
    """

    def __init__(self, total: int | None = None, *, enabled: bool = True,
                 unit: str = "block", header: str | None = None):
        self.enabled = enabled
        self.unit = unit
        self.header = header
        self.fixed = total is not None
        self.total = int(total or 0)
        self.bar = None

    def _announce(self) -> None:
        if self.header is not None:
            print(self.header, file=sys.stderr, flush=True)
            self.header = None

    def _open(self):
        if self.bar is None and self.enabled:
            from tqdm import tqdm

            self.bar = tqdm(total=self.total, file=sys.stderr, unit=self.unit,
                            dynamic_ncols=True, leave=False, bar_format=_FORMAT)
        return self.bar

    def stage(self, name: str, blocks: int, done: int = 0) -> None:
        """A run named ``name`` of ``blocks`` blocks starts, ``done`` of them already
        in its store."""
        self._announce()
        if not self.fixed:
            self.total += int(blocks)
        bar = self._open()
        if bar is not None:
            bar.total = self.total
            bar.set_description_str(name, refresh=False)
            bar.update(int(done))
            bar.refresh()

    def update(self, k: int = 1) -> None:
        if self.bar is not None:
            self.bar.update(k)

    def step(self, text: str) -> None:
        """Say what is being computed now (between blocks: references, plots)."""
        self._announce()
        bar = self._open()
        if bar is not None:
            bar.set_description_str(text)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
            self.bar = None
