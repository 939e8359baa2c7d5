"""Small array helpers shared by every layer: read-only copies for the
objects that must not change under their users, and chunks of cells that keep
temporaries within a memory budget."""
from __future__ import annotations

import numpy as np

__all__ = ["readonly", "chunk_slices"]


def readonly(a) -> np.ndarray:
    """A C-contiguous, write-protected array of ``a`` (a copy only when needed)."""
    a = np.ascontiguousarray(a)
    a.setflags(write=False)
    return a


def chunk_slices(count: int, per_item: int, budget: int = 4_000_000) -> list[slice]:
    """Slices over ``range(count)`` of at most ``budget // per_item`` items
    each (at least one), so that a temporary of ``per_item`` numbers per item
    stays within ``budget`` numbers.

    >>> chunk_slices(5, 2, budget=4)
    [slice(0, 2, None), slice(2, 4, None), slice(4, 5, None)]
    """
    step = max(1, budget // max(per_item, 1))
    return [slice(i, min(count, i + step)) for i in range(0, count, step)]
