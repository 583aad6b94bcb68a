"""What a Monte Carlo run keeps while its chunks stream past (JCGM 101:2008 7.5-7.8).

The intervals need every value of an output (its order statistics), so each output is kept
once, in one array whose two tails are sorted in place at the end (the middle when a report
first reads every value); outputs asked for in trial order (to
propagate them further, e.g. a gain and intercept pair) are kept a second time unsorted.
Means, variances and the output covariance are accumulated chunk by chunk, so no matrix of
every output of every trial is ever formed.
"""

from __future__ import annotations

from collections.abc import Callable, Collection, Mapping

import numpy as np

from budget.errors import field_error

__all__ = ["Column", "Blocks", "Moments", "Accumulator", "sort_tails"]

Derived = Mapping[str, Callable[[Mapping[str, np.ndarray]], np.ndarray]]


def sort_tails(a: np.ndarray, k: int) -> tuple[int, int]:
    """Sort in place the k smallest values of ``a`` into a[:k] and the k largest into a[-k:], each in
    ascending order, every other value between them in any order; returns that middle slice (lo, hi).

    A partition about the two order statistics bounding the middle (introselect, linear time),
    then two sorts of k values: for the intervals of p = 0.95 (k = M/20) about a fifth of a full
    sort's time. Where the tails would cover most of the values, the whole array is sorted, (0, 0).
    """
    m = a.size
    if k < 1 or 4 * k >= m:
        a.sort()
        return 0, 0
    a.partition((k - 1, m - k))
    a[:k].sort()
    a[m - k:].sort()
    return k, m - k


class Column:
    """One float64 value per trial, appended chunk by chunk.

    With the final length known the array is allocated once; otherwise it grows by doubling
    with ``ndarray.resize``, which the C library does in place or by remapping pages, so a
    growing column does not hold two copies of itself.
    """

    def __init__(self, size: int | None) -> None:
        self._a = np.empty(size if size is not None else 1 << 16)
        self.n = 0

    def extend(self, v: np.ndarray) -> None:
        end = self.n + v.shape[0]
        if end > self._a.shape[0]:
            self._a.resize(max(end, 2 * self._a.shape[0]), refcheck=False)
        self._a[self.n:end] = v
        self.n = end

    def array(self) -> np.ndarray:
        """The values so far, trimmed to their number; the column is spent."""
        if self._a.shape[0] != self.n:
            self._a.resize(self.n, refcheck=False)
        a, self._a = self._a, np.empty(0)
        return a


class Blocks:
    """One float64 value per trial, kept as the caller's own arrays (blocks) and joined once, at the end.

    For the adaptive procedure, whose length is not known ahead: each sequence's values are already
    one array of their own (its summaries are taken from it), so keeping that array costs no copy
    and no growing column; the join frees each block as it is copied.
    """

    def __init__(self) -> None:
        self._blocks: list[np.ndarray] = []
        self.n = 0

    def append(self, block: np.ndarray) -> None:
        self._blocks.append(block)
        self.n += block.shape[0]

    def array(self) -> np.ndarray:
        """The values of every block, in block order; the blocks are spent."""
        out = np.empty(self.n)
        pos = 0
        self._blocks.reverse()
        while self._blocks:
            b = self._blocks.pop()
            out[pos:pos + b.shape[0]] = b
            pos += b.shape[0]
        return out


_BLAS_SERIAL = 262_143
"""Products below this many multiply-adds stay on one thread in OpenBLAS (its gemm threshold,
65536 × 4; a dot product of more than 10 000 values is threaded). Threads that wait for a
core that other processes hold cost milliseconds per call on a shared machine."""


def _gram(c: np.ndarray) -> np.ndarray:
    """c cᵀ for c of shape (k, b), summed over column blocks small enough for one thread."""
    k, b = c.shape
    step = max(64, min(8192, _BLAS_SERIAL // (k * k)))
    if b <= step:
        return c @ c.T
    out = np.zeros((k, k))
    for s in range(0, b, step):
        block = c[:, s:s + step]
        out += block @ block.T
    return out


class Moments:
    """Running means and co-moment matrix of k outputs, merged chunk by chunk.

    Notes
    -----
    Each chunk is centred on its own means and its co-moments Σ(y − ȳ)(y − ȳ)ᵀ merged with
    the pairwise update of Chan, Golub and LeVeque (1979, *Updating formulae and a pairwise
    algorithm for computing sample variances*, Stanford CS report STAN-CS-79-773):
    C = C_a + C_b + δδᵀ·n_a n_b/(n_a + n_b), δ = ȳ_b − ȳ_a. As accurate as the two-pass
    formula; the covariance is C/(M − 1) (JCGM 101 7.6).
    """

    def __init__(self, k: int) -> None:
        self.n = 0
        self.mean = np.zeros(k)
        self.comoment = np.zeros((k, k))

    def add(self, values: list[np.ndarray]) -> None:
        b = values[0].shape[0]
        if b == 0:
            return
        centred = np.stack(values)
        means = centred.mean(axis=1)
        centred -= means[:, None]
        cb = _gram(centred)
        if self.n == 0:
            self.mean, self.comoment, self.n = means, cb, b
            return
        total = self.n + b
        delta = means - self.mean
        self.mean = self.mean + delta * (b / total)
        self.comoment = self.comoment + cb + np.outer(delta, delta) * (self.n * b / total)
        self.n = total

    def covariance(self) -> np.ndarray:
        return self.comoment / (self.n - 1)


class Accumulator:
    """Everything a Monte Carlo result needs, from chunks of model outputs.

    ``joint`` names the outputs also kept in trial order (True: all); ``derived`` maps names
    to functions of a chunk's outputs giving one more value per trial, kept in trial order. With
    ``blocks`` the outputs' values are not taken from the chunks: the caller hands them over in
    blocks of its own (:meth:`add_block`, any order within a block).
    """

    def __init__(self, size: int | None, joint: bool | Collection[str], derived: Derived | None,
                 blocks: bool = False) -> None:
        self.size = size
        self.blocks = blocks
        self.joint_spec = joint
        self.derived = dict(derived or {})
        self.names: tuple[str, ...] = ()
        self.values: dict[str, Column | Blocks] = {}
        self.joint: dict[str, Column] = {}
        self.moments: Moments | None = None

    def add(self, out: Mapping[str, np.ndarray]) -> None:
        if self.moments is None:
            self.names = tuple(out)
            self.values = {k: Blocks() if self.blocks else Column(self.size) for k in self.names}
            spec = self.joint_spec
            keep = self.names if spec is True else tuple(spec or ())
            unknown = [k for k in keep if k not in self.names]
            if unknown:
                raise field_error("joint", f"names of the model's outputs {list(self.names)}", unknown[0])
            clash = [k for k in self.derived if k in self.names]
            if clash:
                raise field_error("derived", f"names other than the model's outputs {list(self.names)}",
                                  clash[0])
            self.joint = {k: Column(self.size) for k in (*keep, *self.derived)}
            self.moments = Moments(len(self.names))
        if not self.blocks:
            for k in self.names:
                self.values[k].extend(out[k])
        for k, fn in self.derived.items():
            self.joint[k].extend(np.asarray(fn(out), dtype=float))
        for k in self.joint:
            if k not in self.derived:
                self.joint[k].extend(out[k])
        self.moments.add([out[k] for k in self.names])

    def add_block(self, name: str, values: np.ndarray) -> None:
        """Keep ``values`` (the caller's own array, not copied) as values of output ``name``."""
        self.values[name].append(values)

    def tail_sorted_values(self, name: str, k: int) -> tuple[np.ndarray, tuple[int, int]]:
        """All values of one output with its k smallest and k largest sorted in place at either end,
        and the slice between them left unsorted (:func:`sort_tails`); the column is spent."""
        a = self.values.pop(name).array()
        return a, sort_tails(a, k)

    def joint_values(self) -> dict[str, np.ndarray]:
        return {k: c.array() for k, c in self.joint.items()}
