"""Hand-built pieces for the toolpath and replay tests: analytic face curves, a block, a frame."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from wirecut.config import MoldSide
from wirecut.geometry.frames import DirectionFrame
from wirecut.pieces.piece import Block, Piece
from wirecut.ruled.model import RuledCut

__all__ = ["StandInFit", "make_piece", "mesa", "arc_profile", "TargetArrays"]


@dataclass(frozen=True)
class StandInFit:
    """Stand-in for ruled.fit.RuledFit: only ``cut`` is read by the toolpath stage."""

    cut: RuledCut


@dataclass(frozen=True)
class TargetArrays:
    """Target samples built by hand: points (n, 3) mm machine, normals (n, 3), weights (n,) mm^2."""

    points: np.ndarray
    normals: np.ndarray
    weights: np.ndarray


def make_piece(
    left: np.ndarray,
    right: np.ndarray,
    x_mm: tuple[float, float],
    y_mm: tuple[float, float],
    z_mm: tuple[float, float],
    piece_id: str = "P01",
) -> Piece:
    """A piece whose cut has the given face curves (k, 2) mm at the block faces z_mm."""
    frame = DirectionFrame.from_angle(0.0, np.array([0.0, 0.0, 1.0]), MoldSide.BELOW)
    cut = RuledCut(np.asarray(left, float), np.asarray(right, float), z_mm[0], z_mm[1], np.eye(4))
    region = np.array(
        [[x_mm[0], z_mm[0]], [x_mm[1], z_mm[0]], [x_mm[1], z_mm[1]], [x_mm[0], z_mm[1]]]
    )
    return Piece(piece_id, region, frame, np.eye(4), Block(x_mm, y_mm, z_mm), StandInFit(cut))


def mesa(x0: float, x1: float, base: float, height: float, inset: float) -> np.ndarray:
    """A step profile (6, 2) mm: flat at ``base``, up at x0 + inset, flat at base + height, down
    at x1 - inset, flat to x1: four 90 degree corners."""
    a, b = x0 + inset, x1 - inset
    return np.array(
        [[x0, base], [a, base], [a, base + height], [b, base + height], [b, base], [x1, base]]
    )


def arc_profile(xc: float, yc: float, radius: float, x: np.ndarray) -> np.ndarray:
    """Points (k, 2) mm on the upper arc of a circle at abscissae x."""
    x = np.asarray(x, float)
    return np.column_stack([x, yc + np.sqrt(radius**2 - (x - xc) ** 2)])
