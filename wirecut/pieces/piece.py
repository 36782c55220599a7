"""A piece of the mold: a region of the target, its block on the machine, its wire and its cut."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from wirecut.geometry.frames import DirectionFrame

if TYPE_CHECKING:  # the fit type lives in a sibling stage; only annotations need it
    from wirecut.ruled.fit import RuledFit

__all__ = ["Block", "Piece"]


@dataclass(frozen=True)
class Block:
    """The foam blank of a piece as it stands on the machine (machine frame, mm).

    Attributes
    ----------
    x_mm : (2,) float
        Extent along the sweep (machine x), min and max.
    y_mm : (2,) float
        Extent in height: the bed (common base plane) to the top of the blank.
    z_mm : (2,) float
        The two end faces along the wire: (z_left, z_right).
    """

    x_mm: tuple[float, float]
    y_mm: tuple[float, float]
    z_mm: tuple[float, float]

    @property
    def size_mm(self) -> tuple[float, float, float]:
        """(along the sweep, along the wire, height), mm: the blank's box."""
        return (
            self.x_mm[1] - self.x_mm[0],
            self.z_mm[1] - self.z_mm[0],
            self.y_mm[1] - self.y_mm[0],
        )

    @property
    def volume_m3(self) -> float:
        """Blank volume, m^3."""
        a, b, c = self.size_mm
        return a * b * c * 1e-9


@dataclass(frozen=True)
class Piece:
    """One piece of the mold.

    Attributes
    ----------
    id : str
        ``"P01"``, ``"P02"``, ... in split order.
    region_plan : (k, 2) float, mm, part plan view
        Closed outline of the piece's region (first point not repeated).
    frame : DirectionFrame
        The wire direction and the part -> machine rotation.
    part_to_machine : (4, 4) float
        Rigid transform part -> this piece's machine frame (rotation of ``frame`` + placement).
    block : Block
        The blank on the machine, machine frame.
    fit : RuledFit
        The fitted cut (``fit.cut`` a RuledCut in this machine frame) and its deviation report.
    stock : str or None
        Name of the stock kind the blank is cut from (set by the allocation).
    extra : dict
        Stage notes that are not part of the contract (e.g. split bookkeeping).
    """

    id: str
    region_plan: np.ndarray
    frame: DirectionFrame
    part_to_machine: np.ndarray
    block: Block
    fit: RuledFit
    stock: str | None = None
    extra: Any = None
