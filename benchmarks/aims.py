"""The aims of the benchmarks: each a ratio against a named baseline, measured in the run.

A benchmark script measures its figure and its baseline several times, interleaved (on a
shared machine the load changes between repeats; a ratio of two runs made side by side
moves less than either time), and hands the ratios to :meth:`Scorecard.add`.  The aim's
ratio is their median.  An aim is *missed* when that median is beyond the target by more
than the noise allowance (``--tolerance``, 20 % unless told): ``at most 1.5x`` fails above
1.8x, ``at least 20x`` below 16.7x.  :meth:`Scorecard.finish` prints one summary line and
returns the exit code: 0 when every aim holds within the allowance, 1 otherwise.

Not a benchmark itself (its name does not start with ``bench_``); the scripts import it.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

#: Default noise allowance: how far beyond its target a median ratio may be and still pass.
TOLERANCE = 0.20


@dataclass
class Aim:
    """One aim: the ratios measured against ``baseline`` and the target they must meet.

    ``at_most=True`` for a cost (ours / baseline, smaller is better), ``False`` for a
    speed-up (baseline / ours, larger is better).
    """

    name: str
    baseline: str
    ratios: list[float]
    target: float
    at_most: bool = True

    @property
    def ratio(self) -> float:
        """The median of the repeated ratios."""
        return statistics.median(self.ratios)

    def holds(self) -> bool:
        """The median meets the target itself."""
        return self.ratio <= self.target if self.at_most else self.ratio >= self.target

    def missed(self, tolerance: float) -> bool:
        """The median is beyond the target by more than ``tolerance`` (a fraction)."""
        if self.at_most:
            return self.ratio > self.target * (1 + tolerance)
        return self.ratio < self.target / (1 + tolerance)

    def verdict(self, tolerance: float) -> str:
        if self.holds():
            return "met"
        return "MISSED" if self.missed(tolerance) else "within noise"

    def text(self, tolerance: float) -> str:
        word = "at most" if self.at_most else "at least"
        spread = (f", repeats {min(self.ratios):.2f}-{max(self.ratios):.2f}"
                  if len(self.ratios) > 1 else "")
        return (f"aim {self.name}: {self.ratio:.2f}x {self.baseline} (median of "
                f"{len(self.ratios)}{spread}); target {word} {self.target:g}x: "
                f"{self.verdict(tolerance)}")


@dataclass
class Scorecard:
    """The aims of one benchmark run, printed as they come and summed up at the end."""

    tolerance: float = TOLERANCE
    aims: list[Aim] = field(default_factory=list)

    def add(self, name: str, baseline: str, ratios: Sequence[float], target: float, *,
            at_most: bool = True) -> Aim:
        """Record an aim and print its line."""
        aim = Aim(name, baseline, [float(r) for r in ratios], float(target), at_most)
        self.aims.append(aim)
        print(aim.text(self.tolerance), flush=True)
        return aim

    def finish(self) -> int:
        """Print the summary line; 1 when any aim is missed beyond the allowance, else 0."""
        missed = [a.name for a in self.aims if a.missed(self.tolerance)]
        met = sum(a.holds() for a in self.aims)
        print(f"summary: {len(self.aims)} aim(s), {met} met, "
              f"{len(self.aims) - met - len(missed)} short but within the "
              f"{self.tolerance:.0%} noise allowance, {len(missed)} missed"
              + (f" ({', '.join(missed)})" if missed else ""), flush=True)
        return 1 if missed else 0


def wall_time(cmd: Sequence[str], *, env: Mapping[str, str] | None = None,
              cwd: str | Path | None = None) -> float:
    """Seconds of wall time of one run of ``cmd``; raises if it exits non-zero."""
    t = time.perf_counter()
    proc = subprocess.run(list(cmd), env=dict(env) if env is not None else None, cwd=cwd,
                          capture_output=True, text=True)
    wall = time.perf_counter() - t
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(cmd)} exited with {proc.returncode}: "
                           f"{proc.stderr[-500:]}")
    return wall


def paired_ratios(ours: Sequence[str], baseline: Sequence[str], repeats: int, *,
                  env: Mapping[str, str] | None = None, cwd: str | Path | None = None,
                  ) -> tuple[list[float], float, float]:
    """Run ``baseline`` and ``ours`` in turn ``repeats`` times (after one warm-up each).

    Returns the ratios ours / baseline of each pair and the median wall times of ours
    and of the baseline.
    """
    env = dict(os.environ if env is None else env)
    wall_time(baseline, env=env, cwd=cwd)  # warm the file cache for both
    wall_time(ours, env=env, cwd=cwd)
    mine, base = [], []
    for _ in range(repeats):
        base.append(wall_time(baseline, env=env, cwd=cwd))
        mine.append(wall_time(ours, env=env, cwd=cwd))
    ratios = [m / b for m, b in zip(mine, base, strict=True)]
    return ratios, statistics.median(mine), statistics.median(base)
