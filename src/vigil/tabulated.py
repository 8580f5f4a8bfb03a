"""Functions of time tabulated once per process on fixed grids of Julian dates.

A `Table` holds columns computed in blocks of `BLOCK_NODES` nodes on first use, read at the
nearest node or interpolated linearly. Linear interpolation over a step h errs by at most
h^2/8 max|f''|. Because the nodes are fixed, each value read depends only on its own date, so
results do not depend on which other dates are asked for in the same call.
"""

from __future__ import annotations

from typing import Callable, NamedTuple

import numpy as np

BLOCK_NODES = 1024
BLOCKS_KEPT = 2048  # per table: 240 years of the hourly Moon (50 MB), 700 of the 3-hourly sky (270 MB)


class Table(NamedTuple):
    """Columns of functions of time tabulated at the nodes k * step_d (JD), in blocks of nodes.

    `block(b)` returns the values at nodes b * BLOCK_NODES ... (b + 1) * BLOCK_NODES - 1 as
    an array (BLOCK_NODES, n_columns), node by node (one gather fetches a node's columns);
    it is cached, so each block is computed once a process.
    """

    step_d: float
    n_columns: int
    block: Callable[[int], np.ndarray]

    def at(self, jd: np.ndarray, columns: slice = slice(None)) -> np.ndarray:
        """Columns interpolated linearly at the Julian dates jd (1-d), shaped (jd.size, columns)."""
        scaled = np.asarray(jd, dtype=float) / self.step_d
        node = np.floor(scaled)
        values, index = self._values(node, node + 1, columns)
        below = values[index]
        return below + (values[index + 1] - below) * (scaled - node)[:, None]

    def nearest(self, jd: np.ndarray, columns: slice = slice(None)) -> np.ndarray:
        """Columns at the node nearest to each Julian date in jd (1-d), shaped (jd.size, columns)."""
        node = np.rint(np.asarray(jd, dtype=float) / self.step_d)
        values, index = self._values(node, node, columns)
        return values[index]

    def _values(self, low_node, high_node, columns: slice):
        """The columns of the blocks from low_node to high_node, and the position of low_node in them."""
        if low_node.size == 0:
            return np.empty((1, len(range(self.n_columns)[columns]))), np.zeros(0, dtype=np.intp)
        first = int(low_node.min()) // BLOCK_NODES
        last = int(high_node.max()) // BLOCK_NODES
        values = np.concatenate([self.block(b)[:, columns] for b in range(first, last + 1)])
        return values, (low_node - first * BLOCK_NODES).astype(np.intp)


def block_nodes(block: int, step_d: float) -> np.ndarray:
    """The Julian dates of the nodes of one block of a table with step step_d (days)."""
    return (block * BLOCK_NODES + np.arange(BLOCK_NODES)) * step_d
