"""Row-wise cross products of (n, 3) vector arrays.

``np.cross`` on (n, 3) rows moves its operands' axes and works through strided views: on a
million rows it is about four times slower than the same products spelt out per component.
This gives the same values to the bit (the same multiplications and subtractions in the same
order); it serves the mesh-sized arrays of intake and analysis.
"""

from __future__ import annotations

import numpy as np

__all__ = ["cross"]


def cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """(n, 3): ``a x b`` per row of (n, 3) arrays (a (3,) operand broadcasts)."""
    a, b = np.broadcast_arrays(np.asarray(a, float), np.asarray(b, float))
    out = np.empty(a.shape, float)
    out[..., 0] = a[..., 1] * b[..., 2] - a[..., 2] * b[..., 1]
    out[..., 1] = a[..., 2] * b[..., 0] - a[..., 0] * b[..., 2]
    out[..., 2] = a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]
    return out
