"""The Monte Carlo's output errors, binned for a histogram (pure, numpy)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: bins of a histogram: odd, so one bin is centred on 0 V
BINS = 41


@dataclass(frozen=True, slots=True)
class Binned:
    """``counts[i]`` samples lie between ``edges[i]`` and ``edges[i + 1]`` (volts); the
    last bin includes its upper edge."""

    edges: tuple[float, ...]
    counts: tuple[int, ...]
    samples: int


def histogram(samples: np.ndarray, bins: int = BINS) -> Binned:
    """The signed output errors ``samples`` (volts; non-finite ones left out) in ``bins``
    equal bins, symmetric about 0 V and reaching the largest magnitude."""
    values = np.asarray(samples, dtype=float).ravel()
    values = values[np.isfinite(values)]
    span = float(np.max(np.abs(values))) if values.size else 0.0
    if span <= 0.0:
        span = 1e-12  # every sample 0 V: one visible bin around it
    counts, edges = np.histogram(values, bins=bins, range=(-span, span))
    return Binned(tuple(float(e) for e in edges), tuple(int(c) for c in counts),
                  int(values.size))
