"""Frames: the part frame of the mesh and the machine frame of a piece setup.

Part frame: the mesh's own coordinates in mm. ``up`` (the job's ``mold.up``) points from the
kept foam toward the waste for ``mold.side = "below"``.

Machine frame (one per piece setup): origin at the home of the left tower; x horizontal tower
travel (axes X, U), y vertical tower travel (axes Y, V), z along the wire from the left tower
plane (z = 0) to the right tower plane (z = span_mm). The waste side of the target always lies
toward machine +y: for ``mold.side = "above"`` (a counter-mold) the part is turned upside down
about the wire, so every later stage sees one convention.

Plan view: the plane perpendicular to ``up``, with basis (e1, e2) = (:func:`plan_basis`). Plan
coordinates ``(u, v)`` of a part point p are ``(p . e1, p . e2)``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from wirecut.config import MoldSide

__all__ = [
    "plan_basis",
    "to_plan",
    "wire_direction",
    "rotation_part_to_machine",
    "rigid",
    "apply",
    "invert",
    "DirectionFrame",
]


def plan_basis(up: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Orthonormal (e1, e2, up) with e1, e2 spanning the plan view.

    e1 is the part x axis projected onto the plan (part y if x is parallel to up);
    e2 = up x e1, so (e1, e2, up) is right-handed. For up = +z this is the identity.
    """
    up = np.asarray(up, float)
    up = up / np.linalg.norm(up)
    ref = np.array([1.0, 0.0, 0.0])
    if abs(ref @ up) > 0.9:
        ref = np.array([0.0, 1.0, 0.0])
    e1 = ref - (ref @ up) * up
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(up, e1)
    return e1, e2, up


def to_plan(points: np.ndarray, up: np.ndarray) -> np.ndarray:
    """Plan coordinates ``(n, 2)`` mm (and nothing of the height) of part points ``(n, 3)`` mm."""
    e1, e2, _ = plan_basis(up)
    p = np.asarray(points, float)
    return np.column_stack([p @ e1, p @ e2])


def wire_direction(angle_rad: float, up: np.ndarray) -> np.ndarray:
    """Unit wire direction (3,) in the part frame at plan angle ``angle_rad`` from e1 toward e2."""
    e1, e2, _ = plan_basis(up)
    return np.cos(angle_rad) * e1 + np.sin(angle_rad) * e2


def rotation_part_to_machine(wire_dir: np.ndarray, up: np.ndarray, side: MoldSide) -> np.ndarray:
    """Rotation (3, 3) taking part vectors to machine vectors.

    Machine z = the wire direction, machine y = the waste-side normal (``up`` for a mold kept
    below, ``-up`` for one kept above), machine x = y cross z. ``wire_dir`` must be perpendicular
    to ``up`` (horizontal wire).
    """
    z = np.asarray(wire_dir, float)
    z = z / np.linalg.norm(z)
    y = np.asarray(up, float)
    y = y / np.linalg.norm(y)
    if MoldSide(side) is MoldSide.ABOVE:
        y = -y
    y = y - (y @ z) * z
    y /= np.linalg.norm(y)
    x = np.cross(y, z)
    return np.vstack([x, y, z])


def rigid(rotation: np.ndarray, translation: np.ndarray) -> np.ndarray:
    """4x4 row-major rigid transform from a rotation (3, 3) and a translation (3,) mm."""
    m = np.eye(4)
    m[:3, :3] = rotation
    m[:3, 3] = translation
    return m


def apply(transform: np.ndarray, points: np.ndarray) -> np.ndarray:
    """Apply a 4x4 rigid transform to points ``(n, 3)`` mm."""
    p = np.asarray(points, float)
    return p @ transform[:3, :3].T + transform[:3, 3]


def invert(transform: np.ndarray) -> np.ndarray:
    """Inverse of a 4x4 rigid transform."""
    r = transform[:3, :3]
    return rigid(r.T, -r.T @ transform[:3, 3])


@dataclass(frozen=True)
class DirectionFrame:
    """A wire direction in the part frame and the rotation to the machine frame.

    Attributes
    ----------
    angle_rad : float
        Plan angle of the wire from e1 toward e2, radians, in [0, pi).
    wire_part : (3,) float
        Unit wire direction, part frame.
    rotation : (3, 3) float
        Part -> machine rotation (machine z along the wire, y toward the waste).
    """

    angle_rad: float
    wire_part: np.ndarray
    rotation: np.ndarray

    @classmethod
    def from_angle(cls, angle_rad: float, up: np.ndarray, side: MoldSide) -> DirectionFrame:
        a = float(np.mod(angle_rad, np.pi))
        d = wire_direction(a, up)
        return cls(a, d, rotation_part_to_machine(d, up, side))
