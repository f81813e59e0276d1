"""Monte Carlo in constant memory: seeded draws a chunk at a time, and what is kept of them.

A million samples at a dozen condition points are twelve million solved
points; holding them all took gigabytes.  The Monte Carlo of
:mod:`kit.analysis.worstcase` therefore solves a chunk of samples at a time
and keeps only

* :class:`RunningHistogram`: exact counts, minimum, maximum and number of
  the values, in a fixed number of bins that double in width as the values
  spread (the same bins however the stream is cut into chunks);
  percentiles from it are within one bin width of the exact ones;
* the counts of passing samples, with :func:`wilson_interval` for the
  yield (an interval that still means something at 0 % and 100 %).

:class:`SeededColumns` gives exactly the numbers one
``numpy.random.default_rng(seed)`` would give column by column
(``uniform(low, high, n)`` per varied part, in order), a block of rows at a
time, so a seed gives the same samples whatever the chunk size.

Examples
--------
>>> import numpy as np
>>> hist = RunningHistogram(bins=64)
>>> for start in range(0, 1000, 100):
...     hist.add(np.arange(start, start + 100, dtype=float))
>>> hist.count, hist.low, hist.high
(1000, 0.0, 999.0)
>>> bool(abs(hist.percentile(50) - np.percentile(np.arange(1000.0), 50)) <= hist.width)
True
>>> [round(v, 4) for v in wilson_interval(20, 20)]
[0.8389, 1.0]
"""

from __future__ import annotations

import math
from statistics import NormalDist

import numpy as np

DEFAULT_BINS = 1 << 16  # 512 kB of counts; percentiles within 2^-15 of the values' spread or better


def wilson_interval(successes, trials, confidence=0.95):
    """Wilson's score interval for a binomial proportion.

    Wilson, E. B. (1927), "Probable inference, the law of succession, and
    statistical inference", J. Amer. Statist. Assoc. 22, 209-212.  Unlike
    ``p ± z sqrt(p (1 - p) / n)`` it does not shrink to a point at 0 or
    ``n`` successes: 2000 passing samples out of 2000 give 99.81 % … 100 %.

    Parameters
    ----------
    successes, trials : int
        ``0 <= successes <= trials``, ``trials >= 1``.
    confidence : float
        Two-sided coverage, 0 … 1 exclusive.

    Returns
    -------
    (float, float)
        Lower and upper end, within 0 … 1.

    Examples
    --------
    >>> low, high = wilson_interval(2000, 2000)
    >>> round(low, 5), high
    (0.99808, 1.0)
    """
    if not (0 <= successes <= trials and trials >= 1 and 0 < confidence < 1):
        raise ValueError(f"need 0 <= successes <= trials, trials >= 1, 0 < confidence < 1; got "
                         f"{successes}, {trials}, {confidence}")
    z = NormalDist().inv_cdf(0.5 + confidence / 2)
    p = successes / trials
    z2n = z * z / trials
    centre = (p + z2n / 2) / (1 + z2n)
    half = z / (1 + z2n) * math.sqrt(p * (1 - p) / trials + z2n / (4 * trials))
    # At 0 or n successes one end is exactly 0 or 1; rounding must not move it.
    low = 0.0 if successes == 0 else max(0.0, centre - half)
    high = 1.0 if successes == trials else min(1.0, centre + half)
    return low, high


class SeededColumns:
    """The draws of ``numpy.random.default_rng(seed)``, column by column, a block of rows at a time.

    Column ``k`` is what the ``k``-th call ``rng.uniform(low, high, rows)``
    of one generator would return.  PCG64 (NumPy's default) turns one 64-bit
    output into one double, and can jump ahead (``advance``), so the rows
    ``start … start + size`` of column ``k`` are outputs
    ``k rows + start …`` of the generator.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(3)
    >>> first, second = rng.uniform(0, 1, 10), rng.uniform(5, 6, 10)
    >>> block = SeededColumns(3, 10).block(4, 3)
    >>> bool(np.array_equal(block.uniform(0, 1), first[4:7]))
    True
    >>> bool(np.array_equal(block.uniform(5, 6), second[4:7]))
    True
    """

    def __init__(self, seed, rows):
        self._state = np.random.default_rng(seed).bit_generator.state
        self.rows = int(rows)

    def block(self, start, size):
        """The rows ``start … start + size - 1``; each ``uniform`` call on it is the next column."""
        return _Block(self._state, self.rows, start, size)


class _Block:
    def __init__(self, state, rows, start, size):
        self._state, self._rows, self._start, self.size = state, rows, start, size
        self._column = 0

    def uniform(self, low, high):
        bits = np.random.PCG64(0)
        bits.state = self._state
        bits.advance(self._column * self._rows + self._start)
        self._column += 1
        return np.random.Generator(bits).uniform(low, high, self.size)


class RunningHistogram:
    """Exact counts of a stream of values in ``bins`` equal bins that widen as needed.

    The bins lie on a grid anchored at the first value counted, ``anchor +
    j width``, with ``width = width0 2^k``.  The window of ``bins`` bins
    starts at a multiple of half its length; ``k`` is the smallest for
    which the window holds every value so far.  Widening merges
    neighbouring bins in pairs, which the anchored grid keeps aligned, so
    every count stays exact, and the layout depends on the smallest and
    largest value only: counting in chunks of any size gives the same
    histogram.  The minimum, maximum and number of values are kept exactly.

    Parameters
    ----------
    bins : int
        A multiple of 4, at least 4.
    """

    # The first width: 2^-40 of the first value, far below any spread that
    # matters, so the width is set by how the values spread (about 40
    # doublings for a spread of a part in a thousand, each a look at min and max).
    FIRST_WIDTH = 2.0 ** -40
    SMALLEST_WIDTH = 1e-300

    def __init__(self, bins=DEFAULT_BINS):
        if bins < 4 or bins % 4:
            raise ValueError(f"bins must be a multiple of 4, at least 4, not {bins}")
        self.counts = np.zeros(bins, dtype=np.int64)
        self.anchor = None
        self.width = None
        self.start = 0  # grid index of the window's first bin
        self.count = 0
        self.low = math.inf
        self.high = -math.inf

    @property
    def bins(self):
        return self.counts.size

    @property
    def origin(self):
        """Left edge of the window's first bin."""
        return self.anchor + self.start * self.width

    def edges(self):
        """The ``bins + 1`` edges of the window."""
        return self.anchor + (self.start + np.arange(self.bins + 1)) * self.width

    def add(self, values):
        """Count ``values`` (any shape; all finite)."""
        values = np.asarray(values, dtype=float).ravel()
        if values.size == 0:
            return
        if not np.all(np.isfinite(values)):
            raise ValueError("a running histogram counts finite values only")
        if self.anchor is None:
            self.anchor = float(values[0])
            self.width = max(abs(self.anchor) * self.FIRST_WIDTH, self.SMALLEST_WIDTH)
        low, high = min(self.low, float(values.min())), max(self.high, float(values.max()))
        self._cover(low, high)
        index = np.floor((values - self.anchor) / self.width).astype(np.int64) - self.start
        self.counts += np.bincount(index, minlength=self.bins)
        self.count += values.size
        self.low, self.high = low, high

    def _grid(self, value, width):
        """Grid index of ``value`` at ``width``; beyond 2^62 only "far outside" matters."""
        ratio = (value - self.anchor) / width
        return math.floor(ratio) if abs(ratio) < 2.0 ** 62 else int(math.copysign(2.0 ** 62, ratio))

    def _cover(self, low, high):
        """Widen and move the window until it holds ``low … high``, keeping every count."""
        half = self.bins // 2
        width = self.width
        while True:
            start = self._grid(low, width) // half * half
            if self._grid(high, width) < start + self.bins:
                break
            width *= 2
        if width == self.width and start == self.start:
            return
        # The width grew by a power of two, so an old bin's grid index times
        # old/new width (exact in floating point) floors to the new bin's index.
        occupied = np.flatnonzero(self.counts)
        moved = np.floor((self.start + occupied) * (self.width / width)).astype(np.int64) - start
        counts = np.zeros_like(self.counts)
        np.add.at(counts, moved, self.counts[occupied])
        self.counts, self.width, self.start = counts, width, start

    def percentile(self, q):
        """The ``q``-th percentile (0 … 100), NumPy's default (linear) definition, within one bin width.

        The order statistics at the two ranks NumPy interpolates between are
        each placed inside the bin that holds them (spread evenly through
        it); the minimum and maximum are exact.
        """
        if self.count == 0:
            raise ValueError("no values counted")
        rank = q / 100 * (self.count - 1)
        below = math.floor(rank)
        value = self._order_statistic(below)
        if below + 1 < self.count and rank > below:
            value += (rank - below) * (self._order_statistic(below + 1) - value)
        return float(value)

    def _order_statistic(self, r):
        if r <= 0:
            return self.low
        if r >= self.count - 1:
            return self.high
        cumulative = np.cumsum(self.counts)
        j = int(np.searchsorted(cumulative, r, side="right"))
        before = int(cumulative[j - 1]) if j else 0
        inside = self.anchor + (self.start + j + (r - before + 0.5) / int(self.counts[j])) * self.width
        return min(max(inside, self.low), self.high)

    def coarse(self, bins):
        """``(counts, edges)`` of at most ``bins`` bars over the occupied range (exact counts).

        Each bar joins a whole number of bins, so no count is split.
        """
        occupied = np.flatnonzero(self.counts)
        if occupied.size == 0:
            return np.zeros(0, dtype=np.int64), np.zeros(0)
        first, last = int(occupied[0]), int(occupied[-1])
        group = -(-(last - first + 1) // bins)
        starts = np.arange(first, last + 1, group)
        counts = np.add.reduceat(self.counts[first:last + 1], starts - first)
        edges = self.anchor + (self.start + np.append(starts, starts[-1] + group)) * self.width
        return counts, edges
