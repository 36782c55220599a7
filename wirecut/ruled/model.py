"""The model of a hot-wire cut: a ruled surface between two directrix curves.

The wire at parameter index k is the line through ``P_L[k]`` in the left end-face plane
``z = z_left`` and ``P_R[k]`` in the right end-face plane ``z = z_right`` (machine frame).
This is the primal form x(u, v) = (1 - v) a(u) + v b(u) of a ruled surface (J. Wallner,
lecture notes on ruled and developable surfaces), sampled at k = 0..K-1 and linear between
consecutive rulings, so each strip between two rulings is a bilinear (hyperbolic paraboloid)
patch. Its section by any plane z = const is the polyline ``(1 - t) P_L + t P_R`` with
``t = (z - z_left) / (z_right - z_left)``: this is what makes deviation cheap to evaluate.

Both towers of the machine produce exactly this family: extending ruling k to the tower planes
z = 0 and z = span gives the tower positions (similar triangles), see :meth:`RuledCut.at_plane`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["RuledCut"]


@dataclass(frozen=True)
class RuledCut:
    """A ruled cut between the block's two end faces.

    Attributes
    ----------
    left : (k, 2) float, mm, machine frame
        (x, y) of the directrix in the left face plane ``z = z_left``, in sweep order.
    right : (k, 2) float, mm, machine frame
        (x, y) of the directrix in the right face plane ``z = z_right``; ``right[i]`` is on the
        same ruling as ``left[i]``.
    z_left, z_right : float, mm, machine frame
        The block's two end-face planes, ``z_left < z_right``.
    part_to_machine : (4, 4) float
        Rigid transform from the part frame to this setup's machine frame, row-major.
    """

    left: np.ndarray
    right: np.ndarray
    z_left: float
    z_right: float
    part_to_machine: np.ndarray

    def __post_init__(self) -> None:
        left = np.asarray(self.left, float)
        right = np.asarray(self.right, float)
        if left.ndim != 2 or left.shape[1] != 2 or left.shape != right.shape or len(left) < 2:
            raise ValueError("RuledCut needs left and right of equal shape (k >= 2, 2)")
        if not self.z_left < self.z_right:
            raise ValueError("RuledCut needs z_left < z_right")
        object.__setattr__(self, "left", left)
        object.__setattr__(self, "right", right)
        object.__setattr__(self, "part_to_machine", np.asarray(self.part_to_machine, float))

    @property
    def n_rulings(self) -> int:
        """Number of rulings K."""
        return len(self.left)

    @property
    def width_mm(self) -> float:
        """Distance between the two face planes along the wire, mm."""
        return self.z_right - self.z_left

    def t_of(self, z: np.ndarray | float) -> np.ndarray:
        """Ruling parameter t (0 at the left face, 1 at the right) of machine z (mm)."""
        return (np.asarray(z, float) - self.z_left) / (self.z_right - self.z_left)

    def at_plane(self, z: float) -> np.ndarray:
        """The section (k, 2) mm of the cut, extended linearly, by the plane ``z = const``.

        ``at_plane(0.0)`` and ``at_plane(span_mm)`` are the two towers' positions (X, Y) and
        (U, V): linear extrapolation of each ruling (similar triangles).
        """
        t = float(self.t_of(z))
        return (1.0 - t) * self.left + t * self.right

    def rulings(self) -> tuple[np.ndarray, np.ndarray]:
        """The rulings as 3D segments: start (k, 3) and end (k, 3) points, mm, machine frame."""
        k = self.n_rulings
        a = np.column_stack([self.left, np.full(k, self.z_left)])
        b = np.column_stack([self.right, np.full(k, self.z_right)])
        return a, b

    def is_monotone(self) -> bool:
        """True when the rulings do not cross inside the block (x increasing on both faces)."""
        return bool(np.all(np.diff(self.left[:, 0]) > 0) and np.all(np.diff(self.right[:, 0]) > 0))

    def strip_of(
        self, x: np.ndarray, z: np.ndarray
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Locate machine points (x, z) mm in the cut's strips, vectorized.

        The section knots ``qx_k(t) = (1 - t) left[k, 0] + t right[k, 0]`` are increasing in k
        for a monotone cut, so a bisection run on all points at once (ceil(log2 K) steps of
        array operations) finds the strip ``j`` with ``qx_j <= x <= qx_{j+1}``.

        Returns
        -------
        j : (n,) int
            Strip index in 0..K-2 (clipped for points outside).
        w : (n,) float
            Position across the strip, ``(x - qx_j) / (qx_{j+1} - qx_j)``, 0..1 inside.
        t : (n,) float
            Ruling parameter of z (0 at the left face, 1 at the right).
        inside : (n,) bool
            True where x lies within the section at z (z itself may lie outside the faces).
        """
        x = np.asarray(x, float)
        t = self.t_of(z)
        lx, rx = self.left[:, 0], self.right[:, 0]
        k = self.n_rulings
        if self._parallel_sorted():
            # parallel rulings: the knots are the same at every t, up to the rounding of
            # (1 - t) lx + t lx, so a sorted search finds the strip to within one, and one
            # step to each side against the knots as computed below settles it
            j = np.clip(np.searchsorted(lx, x, side="right") - 1, 0, k - 2)
            back = (j > 0) & ((1.0 - t) * lx[j] + t * rx[j] > x)
            j = j - back
            on = (j < k - 2) & ((1.0 - t) * lx[j + 1] + t * rx[j + 1] <= x)
            j = j + on
        else:
            lo = np.zeros(x.shape, dtype=np.int64)
            hi = np.full(x.shape, k - 1, dtype=np.int64)
            for _ in range(int(np.ceil(np.log2(max(k - 1, 1))))):
                mid = (lo + hi) // 2
                right_of = (1.0 - t) * lx[mid] + t * rx[mid] <= x
                lo = np.where(right_of, mid, lo)
                hi = np.where(right_of, hi, mid)
            j = np.minimum(lo, k - 2)
        x0 = (1.0 - t) * lx[j] + t * rx[j]
        x1 = (1.0 - t) * lx[j + 1] + t * rx[j + 1]
        first = (1.0 - t) * lx[0] + t * rx[0]
        last = (1.0 - t) * lx[-1] + t * rx[-1]
        fuzz = 1e-9 * (1.0 + np.abs(x))  # rounding of points lying on the end rulings
        inside = (x >= first - fuzz) & (x <= last + fuzz)
        w = (x - x0) / np.where(x1 > x0, x1 - x0, 1.0)
        return j, w, t, inside

    def _parallel_sorted(self) -> bool:
        """True when every ruling is parallel to the wire's z (the same x on both faces) and
        the knots' x never decrease (computed once per cut)."""
        known = self.__dict__.get("_parallel")
        if known is None:
            lx, rx = self.left[:, 0], self.right[:, 0]
            known = bool(np.array_equal(lx, rx) and np.all(np.diff(lx) >= 0))
            object.__setattr__(self, "_parallel", known)
        return known

    def height_at(self, x: np.ndarray, z: np.ndarray) -> np.ndarray:
        """Machine y (mm) of the cut surface above machine (x, z), for a monotone cut.

        Exact for the piecewise-bilinear surface: the section at plane z is a polyline, linear
        in x between consecutive rulings. NaN where x lies outside the section.
        """
        j, w, t, inside = self.strip_of(x, z)
        ly, ry = self.left[:, 1], self.right[:, 1]
        y0 = (1.0 - t) * ly[j] + t * ry[j]
        y1 = (1.0 - t) * ly[j + 1] + t * ry[j + 1]
        y = (1.0 - w) * y0 + w * y1
        return np.where(inside, y, np.nan)

    def to_mesh(self, steps_along_wire: int = 1) -> tuple[np.ndarray, np.ndarray]:
        """Triangle mesh of the cut: vertices (n, 3) mm machine frame, faces (m, 3) int.

        Each bilinear strip is split into ``steps_along_wire`` rows along the wire (a bilinear
        patch is not planar, so more rows bring the triangles closer to the true surface).
        """
        n = max(1, int(steps_along_wire))
        ts = np.linspace(0.0, 1.0, n + 1)
        k = self.n_rulings
        rows = []
        for t in ts:
            xy = (1.0 - t) * self.left + t * self.right
            z = np.full(k, self.z_left + t * (self.z_right - self.z_left))
            rows.append(np.column_stack([xy, z]))
        verts = np.vstack(rows)
        faces = []
        for r in range(n):
            a = r * k + np.arange(k - 1)
            b = a + 1
            c = a + k
            d = c + 1
            faces.append(np.column_stack([a, b, d]))
            faces.append(np.column_stack([a, d, c]))
        return verts, np.vstack(faces)
