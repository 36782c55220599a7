"""The plan-view certificate of the undercut rays: a proven height field casts no ray, and it is
never given to a surface whose rays do meet it again."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from shapes import cylinder, grid_faces, jittered_graph, saddle, sphere_cap

from wirecut.config import MoldSide, default_job
from wirecut.geometry.mesh import target_from_arrays
from wirecut.geometry.occlusion import occluded_vertices, plan_view_injective, vertex_rays

JOB = default_job()


def _target(v, f, side=MoldSide.BELOW):
    job = dataclasses.replace(JOB, mold=dataclasses.replace(JOB.mold, side=side))
    return target_from_arrays(np.asarray(v, float), np.asarray(f), job)[0]


def _annulus(r0=200.0, r1=600.0, n_around=48, n_rad=6, lift=0.0):
    """A flat-ish ring (one hole) z = lift + 1e-4 r^2, wound to face up."""
    t = np.linspace(0.0, 2 * np.pi, n_around, endpoint=False)
    r = np.linspace(r0, r1, n_rad)
    rr, tt = np.meshgrid(r, t, indexing="ij")
    v = np.column_stack([(rr * np.cos(tt)).ravel(), (rr * np.sin(tt)).ravel()])
    v = np.column_stack([v, lift + 1e-4 * (v**2).sum(1)])
    f = []
    for i in range(n_rad - 1):
        for j in range(n_around):
            a, b = i * n_around + j, i * n_around + (j + 1) % n_around
            c, d = a + n_around, b + n_around
            f += [[a, b, d], [a, d, c]]
    return v, np.array(f)


def _disk(cx, cy, z, half, n=9):
    x, y = np.meshgrid(np.linspace(-half, half, n), np.linspace(-half, half, n), indexing="ij")
    v = np.column_stack([cx + x.ravel(), cy + y.ravel(), np.full(n * n, z)])
    return v, grid_faces(n, n)


def _joined(*parts):
    vs, fs, at = [], [], 0
    for v, f in parts:
        vs.append(v)
        fs.append(f + at)
        at += len(v)
    return np.concatenate(vs), np.concatenate(fs)


def _ramp(turns=1.5, n_t=90, n_r=5):
    """A helicoid ramp over more than one turn: every face looks up, yet the upper turn lies
    over the lower one in plan (a car park's ramp)."""
    t = np.linspace(0.0, 2 * np.pi * turns, n_t)
    r = np.linspace(300.0, 600.0, n_r)
    tt, rr = np.meshgrid(t, r, indexing="ij")
    v = np.column_stack([(rr * np.cos(tt)).ravel(), (rr * np.sin(tt)).ravel(), 40.0 * tt.ravel()])
    return v, grid_faces(n_t, n_r)[:, ::-1]


HEIGHT_FIELDS = {
    "saddle": saddle(n=31),
    "sphere cap": sphere_cap(2000.0, 500.0, 25),
    "jittered": jittered_graph(lambda x, y: 1e-4 * x * x - 2e-4 * y * y, 600.0, 300.0, 30, 16),
    "annulus": _annulus(),
    "two disks apart": _joined(_disk(0, 0, 0, 100), _disk(400, 0, 50, 100)),
    "a disk in the hole of a ring": _joined(_annulus(lift=0.0), _disk(0, 0, 300.0, 80.0)),
    "half cylinder, 150 deg": cylinder(500.0, 800.0, 40, 20, arc=np.radians(150)),
}


@pytest.mark.parametrize("name", list(HEIGHT_FIELDS))
def test_height_fields_are_certified_and_their_rays_agree(name) -> None:
    # the certificate is a proof of what the rays find: no vertex meets the target again
    target = _target(*HEIGHT_FIELDS[name])
    assert plan_view_injective(target)
    assert not vertex_rays(target).any()
    assert not occluded_vertices(target).any()


def test_a_counter_mold_is_certified_from_below() -> None:
    # waste below the surface (a mold kept above): the plan view is mirrored
    v, f = sphere_cap(2000.0, 500.0, 21)
    target = _target(v, f, side=MoldSide.ABOVE)
    assert plan_view_injective(target)
    assert not vertex_rays(target).any()


NOT_CERTIFIED = {
    # every face looks up, but the upper turn lies over the lower: the rays meet it
    "ramp over one turn": (_ramp(), True),
    # a small disk floating over a larger one (two nested outer loops: winding 2)
    "disk over disk": (_joined(_disk(0, 0, 0, 300), _disk(0, 0, 200, 100)), True),
    # faces beyond the sides of a pipe look down: undercut by the face test, not certified
    "pipe, 270 deg": (cylinder(500.0, 800.0, 60, 12, arc=np.radians(270)), True),
    # two squares sharing one corner vertex: a pinched boundary; nothing is occluded
    "pinched corner": (_joined(_disk(0, 0, 0, 50, n=3), _disk(100, 100, 0, 50, n=3)), False),
}


@pytest.mark.parametrize("name", list(NOT_CERTIFIED))
def test_overlapping_or_unproven_surfaces_cast_their_rays(name) -> None:
    (v, f), occluded = NOT_CERTIFIED[name]
    target = _target(v, f)  # intake merges the pinched corner into one vertex
    assert not plan_view_injective(target)
    assert occluded_vertices(target).any() == occluded
    assert np.array_equal(occluded_vertices(target), vertex_rays(target))


def test_a_vertical_step_is_left_to_the_rays() -> None:
    # edge-on faces put two vertices on one plan point: the certificate does not apply
    x = np.array([0.0, 100.0, 100.0, 200.0])
    z = np.array([0.0, 0.0, 50.0, 50.0])
    ys = np.linspace(0.0, 100.0, 3)
    v = np.array([[xi, y, zi] for xi, zi in zip(x, z, strict=True) for y in ys])
    target = _target(v, grid_faces(4, 3)[:, ::-1])
    assert not plan_view_injective(target)


def test_random_folded_grids_never_certify_an_occluded_surface() -> None:
    # grids whose plan positions are shaken hard enough that some fold over: whenever the
    # certificate holds, casting every ray must find nothing; and both answers must occur
    rng = np.random.default_rng(11)
    seen = {True: 0, False: 0, "occluded": 0}
    for case in range(60):
        n = 7
        x, y = np.meshgrid(np.arange(n, dtype=float), np.arange(n, dtype=float), indexing="ij")
        amp = 0.15 + 0.9 * (case % 6) / 5.0
        v = np.column_stack(
            [
                100.0 * (x.ravel() + rng.uniform(-amp, amp, n * n)),
                100.0 * (y.ravel() + rng.uniform(-amp, amp, n * n)),
                rng.uniform(0.0, 300.0, n * n),
            ]
        )
        target = _target(v, grid_faces(n, n))
        certified = plan_view_injective(target)
        rays = vertex_rays(target)
        if certified:
            assert not rays.any(), case
        seen[certified] += 1
        seen["occluded"] += bool(rays.any())
        assert np.array_equal(occluded_vertices(target), rays)
    assert seen[True] >= 5 and seen[False] >= 5 and seen["occluded"] >= 5, seen


def test_points_under_another_sheet_are_occluded_and_only_they() -> None:
    from wirecut.geometry.occlusion import is_height_field, occluded_points

    # a small disk 200 mm over the middle of a large one: the lower disk's points under it
    # are occluded (the wire from above meets the upper disk first), the rest are not
    v, f = _joined(_disk(0.0, 0.0, 100.0, 300.0, n=13), _disk(0.0, 0.0, 300.0, 100.0, n=5))
    target = _target(v, f)
    assert not is_height_field(target)
    rng = np.random.default_rng(2)
    xy = rng.uniform(-290.0, 290.0, (400, 2))
    lower = np.flatnonzero(target.vertices[target.faces].mean(axis=1)[:, 2] < 200.0)
    # the lower disk's face under each point: found by the plan containment of its triangles
    tri = target.vertices[target.faces[lower]][:, :, :2]
    own = np.full(len(xy), -1)
    for k, p in enumerate(xy):
        d = tri - p
        cross_z = (
            d[:, :, 0] * np.roll(d, -1, axis=1)[:, :, 1]
            - d[:, :, 1] * np.roll(d, -1, axis=1)[:, :, 0]
        )
        inside = (cross_z >= -1e-9).all(axis=1) | (cross_z <= 1e-9).all(axis=1)
        own[k] = lower[np.flatnonzero(inside)[0]]
    pts = np.column_stack([xy, np.full(len(xy), 100.0)])
    got = occluded_points(target, pts, own)
    under = (np.abs(xy) < 100.0 - 1e-6).all(axis=1)
    clear = (np.abs(xy) > 100.0 + 1e-6).any(axis=1)
    assert got[under].all() and not got[clear].any()
    # the upper disk's own points are not occluded by anything
    top = np.flatnonzero(target.vertices[target.faces].mean(axis=1)[:, 2] > 200.0)
    up_pts = np.column_stack([rng.uniform(-90, 90, (50, 2)), np.full(50, 300.0)])
    assert not occluded_points(target, up_pts, np.full(50, top[0])).any()


def test_a_height_field_occludes_no_point_and_builds_no_index() -> None:
    from wirecut.geometry import occlusion

    target = _target(*sphere_cap(2000.0, 400.0, 21))
    pts = target.vertices[target.faces].mean(axis=1)
    assert occlusion.is_height_field(target)
    assert not occlusion.occluded_points(target, pts, np.arange(len(pts))).any()
    assert target not in occlusion._plan_index
