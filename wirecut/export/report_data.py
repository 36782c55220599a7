"""Gather a plan's pictures and numbers into the report's input (:class:`ReportData`)."""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from wirecut.export.report import PieceSheet, ReportData
from wirecut.geometry.frames import to_plan

__all__ = ["report_data", "vertex_deviation"]


def vertex_deviation(
    vertices_plan: np.ndarray, samples_plan: np.ndarray, signed: np.ndarray, reach_mm: float
) -> np.ndarray:
    """Signed deviation (n,) mm at each target vertex: that of the nearest sample in plan
    view within ``reach_mm``; NaN where no sample is that close (not covered by a piece)."""
    out = np.full(len(vertices_plan), np.nan)
    ok = np.isfinite(signed)
    if not ok.any():
        return out
    tree = cKDTree(samples_plan[ok])
    d, i = tree.query(vertices_plan, k=1, distance_upper_bound=reach_mm)
    hit = np.isfinite(d)
    out[hit] = signed[ok][i[hit]]
    return out


def report_data(plan, data: dict, title: str = "wirecut plan") -> ReportData:
    """ReportData of a plan and its plan.json dict (``data``), files already written."""
    sheets = []
    xy_all, dev_all = [], []
    for pp, entry in zip(plan.pieces, data["pieces"], strict=True):
        rep = pp.deviation
        t = pp.toolpath
        xy_all.append(pp.samples.plan_xy)
        dev_all.append(rep.signed)
        if t is not None:
            left, right = t.left_profile, t.right_profile
            towers = t.towers
            kl, kr = tuple(t.kerf_left_mm), tuple(t.kerf_right_mm)
            dwell, over = float(t.dwell_time_s), float(t.overshoot_mm)
        else:
            left, right = pp.piece.fit.cut.left, pp.piece.fit.cut.right
            towers = np.zeros((0, 4))
            kl = kr = (float("nan"), float("nan"))
            dwell = over = float("nan")
        sheets.append(
            PieceSheet(
                id=pp.piece.id,
                region_plan=np.asarray(pp.piece.region_plan),
                sample_plan_xy=pp.samples.plan_xy,
                sample_deviation=rep.signed,
                left_profile=left,
                right_profile=right,
                towers=towers,
                kerf_left_mm=kl,
                kerf_right_mm=kr,
                dwell_s=dwell,
                overshoot_mm=over,
                gcode=entry.get("gcode"),
                dxf=entry.get("dxf"),
            )
        )
    target = plan.target
    vplan = to_plan(target.vertices, target.up)
    if xy_all:
        xy = np.vstack(xy_all)
        dev = np.concatenate(dev_all)
        spacing = max(float(getattr(pp.samples, "spacing_mm", 10.0)) for pp in plan.pieces)
        vdev = vertex_deviation(vplan, xy, dev, reach_mm=3.0 * spacing + 1.0)
    else:
        vdev = np.full(len(vplan), np.nan)
    return ReportData(
        plan_json=data,
        target_vertices=np.asarray(target.vertices),
        target_faces=np.asarray(target.faces),
        target_deviation=vdev,
        pieces=tuple(sheets),
        title=title,
    )
