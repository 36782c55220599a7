"""Mesh intake: read a designer's mesh, clean it, and keep the surface the wire must cut.

The result is a :class:`TargetSurface`: a triangle mesh in the part frame (mm) whose face normals
point toward the **waste side** (``mold.up`` for a mold kept below the surface, ``-mold.up`` for a
counter-mold kept above it).

Intake steps, in order:

1. read the file (binary STL directly with numpy; ASCII STL, OBJ, PLY, OFF and GLB through
   trimesh, a GLB scene concatenated into one mesh); refuse anything that is not a triangle
   mesh with :class:`~wirecut.errors.MeshError`, naming the file and the problem in one line;
2. convert units (``Units.to_mm``) and warn when the size looks like the wrong unit;
3. merge duplicate vertices (coordinates equal after rounding to 1e-9 of the bounding-box
   diagonal), drop degenerate faces (a repeated vertex index, zero area, collinear corners:
   area below 1e-12 of the longest edge squared) and exact duplicate faces;
4. make the winding consistent per connected component (parity over the face-adjacency graph);
5. a **closed solid** (every edge shared by exactly two faces) keeps only the faces that look
   toward the waste side: ``n . w > 0.1`` (about 84 degrees or less from the waste direction
   ``w``), after turning the normals outward (positive signed volume); an **open surface** is kept
   whole, each component flipped so that its area-weighted mean normal looks toward ``w``. Faces
   that still look away from ``w`` stay: they are undercut and the analysis flags them.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from pathlib import Path

import numpy as np
from scipy import sparse
from scipy.sparse import csgraph

from wirecut.config import JobProfile, MoldSide, Units
from wirecut.errors import MeshError
from wirecut.findings import Finding, Severity
from wirecut.geometry.vectors import cross

__all__ = [
    "TargetSurface",
    "load_target",
    "target_from_arrays",
    "waste_direction",
    "EdgeTable",
    "edge_table",
    "edge_use",
    "boundary_vertex_mask",
    "unique_rows",
    "SUPPORTED_SUFFIXES",
    "CLOSED_FACING_THRESHOLD",
    "ABSURD_EXTENT_MM",
    "MAX_TRIANGLES",
]

#: File suffixes read by :func:`load_target`, mapped to trimesh's file type.
SUPPORTED_SUFFIXES = {".stl": "stl", ".obj": "obj", ".ply": "ply", ".off": "off", ".glb": "glb"}

#: A face of a closed solid belongs to the target when ``n . w`` exceeds this (cos 84.3 deg).
CLOSED_FACING_THRESHOLD = 0.1
#: Largest extent (bounding-box diagonal, mm) accepted at all: 10 km. Beyond it a mesh is
#: refused (garbage or wrong units); between 200 m and this, only a units finding is given.
ABSURD_EXTENT_MM = 1.0e7
#: Most triangles a mesh file may have. The analysis peaks near 1.3 GB at 1M triangles
#: (docs/performance.md); 2M keeps every command within 4 GB. Larger meshes are refused
#: with a message that says how to decimate them.
MAX_TRIANGLES = 2_000_000

_PLAUSIBLE_DIAGONAL_MM = (50.0, 200_000.0)
# a surface whose mean normal lies further than this from the waste direction, and which
# turned to it would stand at most this share of its height, gets a hint to set mold.up
_TILT_HINT_DEG = 15.0
_TILT_HINT_HEIGHT_SHARE = 0.8


@dataclass(frozen=True, eq=False)
class TargetSurface:
    """The surface to cut, part frame, mm.

    Attributes
    ----------
    vertices : (n, 3) float, mm, part frame
        Vertex positions after unit conversion and merging.
    faces : (m, 3) int64
        Vertex indices of each triangle, wound so that the right-hand normal is ``face_normals``.
    face_normals : (m, 3) float, unit, part frame
        Face normals, oriented toward the waste side (faces of an open surface that look away
        from it are undercut and keep their true orientation).
    up : (3,) float, unit, part frame
        The job's ``mold.up``.
    side : MoldSide
        Which side of the surface the foam is kept on.
    merged_vertices : int
        Vertices removed by merging duplicates on intake.
    dropped_faces : int
        Degenerate or duplicate faces removed on intake (plus, for a closed solid, none of the
        faces left out because they look away from the waste side: see ``was_closed``).
    was_closed : bool
        True when the input was a closed solid and only its waste-facing faces were kept.
    source_units : Units
        Unit the input was read in (converted to mm).
    source : str
        File name, or ``"arrays"`` for :func:`target_from_arrays`.
    """

    vertices: np.ndarray
    faces: np.ndarray
    face_normals: np.ndarray
    up: np.ndarray
    side: MoldSide = MoldSide.BELOW
    merged_vertices: int = 0
    dropped_faces: int = 0
    was_closed: bool = False
    source_units: Units = Units.MM
    source: str = "arrays"

    @property
    def waste_normal(self) -> np.ndarray:
        """(3,) unit vector toward the waste side, part frame: ``up`` or ``-up``."""
        return waste_direction(self.up, self.side)

    @cached_property
    def face_areas(self) -> np.ndarray:
        """(m,) float, mm^2: area of each face."""
        return 0.5 * np.linalg.norm(cross(*_face_edges(self.vertices, self.faces)), axis=1)

    @property
    def area_mm2(self) -> float:
        """Total area, mm^2."""
        return float(self.face_areas.sum())

    @cached_property
    def extent_mm(self) -> float:
        """Diagonal of the axis-aligned bounding box, mm (the surface's extent)."""
        return float(np.linalg.norm(np.ptp(self.vertices, axis=0)))

    @cached_property
    def vertex_normals(self) -> np.ndarray:
        """(n, 3) float, unit, part frame: area-weighted vertex normals (same orientation)."""
        w = self.face_normals * self.face_areas[:, None]
        n = len(self.vertices)
        # per coordinate, from a contiguous column (a bincount reads strided weights at half
        # the speed); the same sums in the same order as scattering (n, 3) rows corner by corner
        cols = [np.ascontiguousarray(w[:, j]) for j in range(3)]
        acc = np.column_stack(
            [
                sum(np.bincount(self.faces[:, k], weights=c, minlength=n) for k in range(3))
                for c in cols
            ]
        )
        norm = np.linalg.norm(acc, axis=1, keepdims=True)
        return np.divide(acc, norm, out=np.zeros_like(acc), where=norm > 0)

    @cached_property
    def edge_table(self) -> EdgeTable:
        """:func:`edge_table` of the faces, computed once."""
        return edge_table(self.faces, len(self.vertices))

    @cached_property
    def boundary_vertices(self) -> np.ndarray:
        """(n,) bool: vertices on an edge used by one face (or by more than two)."""
        return boundary_vertex_mask(self.faces, len(self.vertices), self.edge_table)

    @cached_property
    def mean_edge_mm(self) -> float:
        """Mean edge length, mm (each face's three edges)."""
        e01, e02 = _face_edges(self.vertices, self.faces)
        total = sum(float(np.linalg.norm(e, axis=1).sum()) for e in (e01, e02, e02 - e01))
        return total / (3 * len(self.faces))

    @cached_property
    def trimesh(self):
        """A ``trimesh.Trimesh`` view of the surface (built once, not processed)."""
        import trimesh

        return trimesh.Trimesh(
            self.vertices, self.faces, face_normals=self.face_normals, process=False
        )


def waste_direction(up: np.ndarray, side: MoldSide) -> np.ndarray:
    """(3,) unit vector toward the waste side: ``up`` for ``side = below``, ``-up`` for above."""
    u = np.asarray(up, float)
    u = u / np.linalg.norm(u)
    return u if MoldSide(side) is MoldSide.BELOW else -u


def _face_edges(vertices: np.ndarray, faces: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(m, 3), (m, 3) mm: each face's edges from its first corner, ``v1 - v0`` and ``v2 - v0``
    (gathered per corner: one (m, 3, 3) gather and strided slices of it cost twice as much)."""
    v0 = vertices[faces[:, 0]]
    return vertices[faces[:, 1]] - v0, vertices[faces[:, 2]] - v0


@dataclass(frozen=True, eq=False)
class EdgeTable:
    """The undirected edges of a triangle mesh and the directed face edges that use them.

    The directed face edges are numbered by position ``3 f + k``: edge k of face f runs from
    corner k to corner ``(k + 1) % 3``.

    Attributes
    ----------
    edges : (e, 2) int64
        Unique undirected edges, smaller vertex index first, in lexicographic order.
    counts : (e,) int64
        Number of face edges on each edge (1 on the boundary, 2 inside a manifold).
    order : (3m,) int64
        Face-edge positions grouped by edge in the order of ``edges``, ascending within an edge.
    first : (e,) int64
        Where each edge's run starts in ``order``.
    """

    edges: np.ndarray
    counts: np.ndarray
    order: np.ndarray
    first: np.ndarray

    @cached_property
    def inverse(self) -> np.ndarray:
        """(3m,) int64: the edge of each face-edge position (``np.unique``'s inverse)."""
        inv = np.empty(len(self.order), np.int64)
        inv[self.order] = np.repeat(np.arange(len(self.edges)), self.counts)
        return inv

    def pairs(self) -> tuple[np.ndarray, np.ndarray]:
        """The two face-edge positions (k,), (k,) of each edge used by exactly two faces, in
        edge order, the smaller position first."""
        start = self.first[self.counts == 2]
        return self.order[start], self.order[start + 1]

    def lone(self) -> np.ndarray:
        """(k,) ascending: the face-edge positions on edges used by one face only."""
        return np.sort(self.order[self.first[self.counts == 1]])

    def rewound(self, flip: np.ndarray) -> EdgeTable:
        """The table after faces ``flip`` (m,) bool are re-wound ``[a, b, c] -> [c, b, a]``:
        their face edges (c, b), (b, a), (a, c) are the old edges 1, 0 and 2, so positions
        ``3 f`` and ``3 f + 1`` trade places (within an edge the positions keep their order:
        they belong to different faces)."""
        if not flip.any():
            return self
        pos = self.order
        face, k = np.divmod(pos, 3)
        moved = flip[face] & (k < 2)
        new = pos.copy()
        new[moved] += 1 - 2 * k[moved]
        return EdgeTable(self.edges, self.counts, new, self.first)


def edge_table(faces: np.ndarray, n_vertices: int) -> EdgeTable:
    """The :class:`EdgeTable` of ``faces`` (m, 3) over ``n_vertices`` vertices.

    One sort: where the edge key (smaller index, larger index) and the face-edge position fit
    in 63 bits together (every mesh within ``MAX_TRIANGLES``), both are packed into one int64
    and sorted as plain values, which gives the grouping and the ascending positions at once;
    otherwise a stable argsort of the keys."""
    a = faces.astype(np.int64, copy=False)
    b = np.roll(a, -1, axis=1)
    kb = max(1, int(n_vertices - 1).bit_length())
    key = ((np.minimum(a, b) << kb) | np.maximum(a, b)).ravel()
    pb = max(1, (len(key) - 1).bit_length())
    if 2 * kb + pb <= 63:
        packed = np.sort((key << pb) | np.arange(len(key), dtype=np.int64))
        order = packed & ((1 << pb) - 1)
        sk = packed >> pb
    else:
        order = np.argsort(key, kind="stable")
        sk = key[order]
    start = np.ones(len(sk), bool)
    np.not_equal(sk[1:], sk[:-1], out=start[1:])
    first = np.flatnonzero(start)
    uniq = sk[first]
    counts = np.diff(np.append(first, len(sk)))
    edges = np.column_stack([uniq >> kb, uniq & ((1 << kb) - 1)])
    return EdgeTable(edges, counts, order, first)


def edge_use(faces: np.ndarray, n_vertices: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Undirected edges and how the faces use them: ``np.unique`` of the edge keys.

    Returns
    -------
    edges : (e, 2) int
        Unique undirected edges, smaller index first.
    counts : (e,) int
        Number of faces using each edge.
    inverse : (3m,) int
        Edge index of each directed face edge ``(f0, f1), (f1, f2), (f2, f0)`` in face order.
    """
    t = edge_table(faces, n_vertices)
    return t.edges, t.counts, t.inverse


def boundary_vertex_mask(
    faces: np.ndarray, n_vertices: int, table: EdgeTable | None = None
) -> np.ndarray:
    """(n,) bool: vertices on an edge used by exactly one face (or by more than two).
    ``table`` is the faces' :func:`edge_table` when it is already known."""
    t = table if table is not None else edge_table(faces, n_vertices)
    mask = np.zeros(n_vertices, bool)
    mask[t.edges[t.counts != 2].ravel()] = True
    return mask


def _orient_consistently(faces: np.ndarray, n_vertices: int) -> tuple[np.ndarray, np.ndarray]:
    """Flip faces so neighbours across every manifold edge traverse it in opposite directions.

    Parity propagation on a doubled graph: node ``f`` is face f as given, node ``f + m`` is it
    flipped. Two faces sharing an edge in the same direction link (f, g + m) and (f + m, g);
    in opposite directions (f, g) and (f + m, g + m). Each face takes the state that lies in the
    same doubled component as the first face of its component as given.

    Returns the re-wound faces (m, 3), the component label of each face (m,) and the
    :func:`edge_table` of the re-wound faces.
    """
    m = len(faces)
    forward = (faces < np.roll(faces, -1, axis=1)).reshape(-1)
    table = edge_table(faces, n_vertices)
    a, b = table.pairs()
    fa, fb = a // 3, b // 3
    same_dir = forward[a] == forward[b]
    plain = sparse.coo_matrix((np.ones(len(fa)), (fa, fb)), shape=(m, m))
    n_comp, comp = csgraph.connected_components(plain, directed=False)
    if not same_dir.any():  # consistent already (most exported meshes): nothing to flip
        return faces.copy(), comp, table
    src = np.concatenate([fa, fa + m])
    dst = np.concatenate([np.where(same_dir, fb + m, fb), np.where(same_dir, fb, fb + m)])
    doubled = sparse.coo_matrix((np.ones(len(src)), (src, dst)), shape=(2 * m, 2 * m))
    _, label2 = csgraph.connected_components(doubled, directed=False)
    first = np.full(n_comp, m, np.int64)
    np.minimum.at(first, comp, np.arange(m))
    flip = label2[np.arange(m)] != label2[first[comp]]
    # a non-orientable component puts both states together: leave it as given
    flip &= label2[np.arange(m)] != label2[np.arange(m) + m]
    out = faces.copy()
    out[flip] = out[flip][:, ::-1]
    return out, comp, table.rewound(flip)


#: A binary STL triangle record: normal, three corners (float32 each), attribute bytes.
_STL_RECORD = np.dtype([("normal", "<f4", 3), ("corners", "<f4", (3, 3)), ("attribute", "<u2")])


def _read_binary_stl(path: Path, size: int) -> tuple[np.ndarray, np.ndarray] | None:
    """Vertices (3m, 3) and faces (m, 3) of a binary STL, or None when the file is not one.

    A binary STL is an 80-byte header, a little-endian uint32 triangle count m and m records
    of 50 bytes; a file whose size is not ``84 + 50 m`` is left to trimesh (ASCII STL, or a
    truncated file that trimesh refuses). The corners come as trimesh's loader gives them,
    unmerged; reading them here spares the import of trimesh (about 0.25 s) and half of its
    reading time (docs/design-choices.md).
    """
    if size < 84:
        return None
    try:
        with open(path, "rb") as fh:
            head = fh.read(84)
            count = int(np.frombuffer(head, "<u4", 1, 80)[0])
            if size != 84 + _STL_RECORD.itemsize * count:
                return None
            records = np.fromfile(fh, _STL_RECORD, count)
    except OSError as exc:
        name = path.name
        raise MeshError(f"mesh file {name} cannot be read: {exc.__class__.__name__}") from None
    if len(records) != count:
        return None
    with np.errstate(invalid="ignore"):  # a signalling NaN would warn as it is widened
        # one pass from the records' strided field to contiguous float64 rows
        vertices = np.array(records["corners"], dtype=float).reshape(-1, 3)
    return vertices, np.arange(3 * count, dtype=np.int64).reshape(-1, 3)


def _read_arrays(path: Path) -> tuple[np.ndarray, np.ndarray]:
    """Read vertices and faces with trimesh; refuse anything that is not a triangle mesh."""
    name = path.name
    if not path.exists():
        raise MeshError(f"mesh file {name} does not exist")
    if path.is_dir():
        raise MeshError(f"mesh file {name} is a folder, not a mesh file")
    suffix = path.suffix.lower()
    if suffix not in SUPPORTED_SUFFIXES:
        valid = ", ".join(SUPPORTED_SUFFIXES)
        raise MeshError(f"mesh file {name} has suffix {suffix or '(none)'!r}; readable: {valid}")
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise MeshError(f"mesh file {name} cannot be read: {exc.__class__.__name__}") from None
    if size == 0:
        raise MeshError(f"mesh file {name} is empty")
    if suffix == ".stl":
        arrays = _read_binary_stl(path, size)
        if arrays is not None:
            return arrays
    import trimesh

    try:
        # trimesh computes face normals as it reads: NaN or infinite coordinates would print
        # numpy's warnings beside the one-line refusal that _build gives them
        with np.errstate(all="ignore"):
            loaded = trimesh.load(str(path), file_type=SUPPORTED_SUFFIXES[suffix], process=False)
    except Exception as exc:  # trimesh raises many kinds on garbage; none may escape
        detail = "" if isinstance(exc, ImportError) else f" ({exc.__class__.__name__})"
        raise MeshError(
            f"mesh file {name} is unreadable, truncated or not a valid {suffix[1:].upper()} "
            f"file{detail}"
        ) from None
    try:
        if isinstance(loaded, trimesh.Scene):
            kinds = {type(g).__name__ for g in loaded.geometry.values()}
            meshes = [g for g in loaded.geometry.values() if isinstance(g, trimesh.Trimesh)]
            if not meshes:
                if kinds & {"PointCloud"}:
                    raise MeshError(f"mesh file {name} holds a point cloud, not a mesh")
                if kinds & {"Path2D", "Path3D"}:
                    raise MeshError(f"mesh file {name} holds a path, not a mesh")
                raise MeshError(f"mesh file {name} holds no mesh data (text or truncated?)")
            loaded = loaded.to_mesh()
        if isinstance(loaded, trimesh.PointCloud):
            raise MeshError(f"mesh file {name} holds a point cloud, not a mesh")
        if not isinstance(loaded, trimesh.Trimesh):
            raise MeshError(f"mesh file {name} holds a {type(loaded).__name__}, not a mesh")
        vertices = np.asarray(loaded.vertices, dtype=float)
        faces = np.asarray(loaded.faces, dtype=np.int64).reshape(-1, 3)
    except MeshError:
        raise
    except Exception as exc:
        raise MeshError(
            f"mesh file {name} cannot be turned into a mesh ({exc.__class__.__name__})"
        ) from None
    return vertices, faces


def load_target(
    path: str | Path, job: JobProfile, units: Units | None = None
) -> tuple[TargetSurface, list[Finding]]:
    """Read a mesh file and return the target surface and intake findings.

    Parameters
    ----------
    path : str or Path
        STL (ASCII or binary), OBJ, PLY, OFF or GLB file.
    job : JobProfile
        Supplies ``mold.up`` and ``mold.side``.
    units : Units or None
        Unit of the file's coordinates; None means mm.

    Returns
    -------
    target : TargetSurface
    findings : list of Finding
        ``mesh-cleaned`` (info) with the merge and drop counts, ``suspicious-units`` (attention).

    Raises
    ------
    MeshError
        Missing file, folder, empty, unreadable, not a mesh, NaN or infinite coordinates, no faces,
        zero area; the message names the file.
    """
    p = Path(path)
    vertices, faces = _read_arrays(p)
    if len(faces) > MAX_TRIANGLES:
        raise MeshError(
            f"{p.name} has {len(faces):,} triangles; wirecut works within 4 GB up to "
            f"{MAX_TRIANGLES:,}: decimate it first (e.g. trimesh's "
            "simplify_quadric_decimation, or a mesh editor's decimate tool) to about 1,000,000"
        )
    target, findings = _build(vertices, faces, job, units, p.name)
    if p.suffix.lower() == ".stl" and _is_binary_stl(p):
        findings += _single_precision_check(target, units, job, p.name)
    return target, findings


def _is_binary_stl(path: Path) -> bool:
    """True when the file has the size of a binary STL of the triangle count in its header."""
    try:
        size = path.stat().st_size
        with open(path, "rb") as fh:
            head = fh.read(84)
    except OSError:
        return False
    if size < 84 or len(head) < 84:
        return False
    count = int(np.frombuffer(head, "<u4", 1, 80)[0])
    return size == 84 + _STL_RECORD.itemsize * count


#: A binary STL's coordinates are 32-bit floats; when their rounding where the part lies
#: exceeds this share of the tolerance, the intake says so.
_ROUNDING_SHARE = 0.1


def _single_precision_check(
    target: TargetSurface, units: Units | None, job: JobProfile, name: str
) -> list[Finding]:
    """``far-from-origin`` (attention) when the 32-bit coordinates of a binary STL are rounded
    by more than a tenth of the tolerance where the part lies: a float32 keeps 24 bits of
    mantissa, so at 2.5e6 mm (a part exported in site coordinates) its step is 0.25 mm
    (IEEE 754 binary32)."""
    unit = Units.MM if units is None else Units(units)
    v = target.vertices  # merged, in mm: the file's values times the unit
    far_mm = max(float(np.abs(v[:, j]).max()) for j in range(3))
    step = float(np.spacing(np.float32(far_mm / unit.to_mm))) * unit.to_mm
    tol = job.tolerance.surface_mm
    if step <= _ROUNDING_SHARE * tol:
        return []
    return [
        Finding(
            "far-from-origin",
            f"mesh file {name} stores 32-bit coordinates up to {far_mm:.3g} mm from "
            f"the origin, where they are rounded to steps of {step:.3g} mm against a "
            f"{tol:g} mm tolerance: move the part near the origin before exporting it, or "
            "export OBJ or PLY with more digits",
        )
    ]


def target_from_arrays(
    vertices: np.ndarray, faces: np.ndarray, job: JobProfile, units: Units | None = None
) -> tuple[TargetSurface, list[Finding]]:
    """Build the target from arrays, with the same cleaning and checks as :func:`load_target`.

    Parameters
    ----------
    vertices : (n, 3) float, in ``units`` (mm when None), part frame
    faces : (m, 3) int
    """
    try:
        v = np.asarray(vertices, dtype=float).reshape(-1, 3)
        f = np.asarray(faces).reshape(-1, 3)
    except (ValueError, TypeError) as exc:
        raise MeshError(f"mesh arrays have the wrong shape ({exc.__class__.__name__})") from None
    if f.size and not np.issubdtype(f.dtype, np.integer):
        raise MeshError(f"mesh arrays: faces must be integers, got {f.dtype}")
    return _build(v, f.astype(np.int64), job, units, "arrays")


def _packed_columns(q: np.ndarray, bounds: tuple[np.ndarray, np.ndarray] | None = None):
    """The columns of the integer array q (n, d), most significant first, with runs of
    neighbouring columns packed into one non-negative int64 key where their ranges fit in 62
    bits: the keys order the rows as the columns do. ``bounds`` are the columns' (min, max)
    when already known. Returns the keys and whether they are non-negative and packed (False:
    the plain columns, a range could overflow int64)."""
    lo, hi = bounds if bounds is not None else (q.min(axis=0), q.max(axis=0))
    if int(lo.min()) < -(2**61) or int(hi.max()) > 2**61:  # a range could overflow int64
        return [q[:, j] for j in range(q.shape[1])], False
    bits = [int(r).bit_length() for r in (hi - lo)]
    keys: list[np.ndarray] = []
    key, used = None, 0
    for j in range(q.shape[1]):
        col = q[:, j] - lo[j]
        if key is not None and used + bits[j] <= 62:
            key <<= bits[j]
            key |= col
            used += bits[j]
        else:
            if key is not None:
                keys.append(key)
            key, used = col, bits[j]
    keys.append(key)
    return keys, True


def unique_rows(
    q: np.ndarray, bounds: tuple[np.ndarray, np.ndarray] | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """``np.unique(q, axis=0, return_index=True, return_inverse=True)`` without the unique
    rows themselves: (index of each unique row's first occurrence, in lexicographic row
    order; the unique row of every input row). Neighbouring columns whose value ranges fit in
    62 bits together are packed into one key first (the same order, one sort key fewer);
    ``bounds`` are the columns' (min, max) when already known."""
    if not len(q):
        return np.zeros(0, np.int64), np.zeros(0, np.int64)
    keys, packed = _packed_columns(q, bounds)
    return unique_keys(keys, packed)


def unique_keys(keys: list[np.ndarray], packed: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """:func:`unique_rows` of the rows whose columns (most significant first) are ``keys``.

    Key by key, each row's dense rank so far is shifted in front of the next key and the
    combined keys are sorted again: plain (unstable) argsorts of one int64 each, several
    times faster than the stable lexsort of all keys, which stays the way where a combined key
    would not fit in 63 bits (or the keys are not ``packed``: non-negative). Each group's
    first occurrence is its smallest index, as a stable sort would put it first.
    """
    n = len(keys[0])
    rank_bits = max(1, int(n).bit_length())
    fits = packed and all(
        rank_bits + int(k.max()).bit_length() <= 63 and int(k.min()) >= 0 for k in keys[1:]
    )
    if fits:
        order = np.argsort(keys[0])
        sk = keys[0][order]
        for key in keys[1:]:
            change = np.empty(n, bool)
            change[0] = True
            np.not_equal(sk[1:], sk[:-1], out=change[1:])
            rank = change.astype(np.int64).cumsum()  # a bool cumsum casts slowly: 3x this
            rank -= 1
            rank <<= int(key.max()).bit_length()
            rank |= key[order]
            again = np.argsort(rank)
            order, sk = order[again], rank[again]
        starts = np.empty(n, bool)
        starts[0] = True
        np.not_equal(sk[1:], sk[:-1], out=starts[1:])
        first = np.minimum.reduceat(order, np.flatnonzero(starts))
    else:
        order = np.lexsort(keys[::-1]) if len(keys) > 1 else np.argsort(keys[0], kind="stable")
        starts = np.zeros(n, bool)
        starts[0] = True
        for key in keys:  # a new row wherever any key changes
            sk = key[order]
            starts[1:] |= sk[1:] != sk[:-1]
        first = order[starts]
    group = starts.astype(np.int64).cumsum()
    group -= 1
    inv = np.empty(n, np.int64)
    inv[order] = group
    return first, inv


def _repeated_faces(faces: np.ndarray, n_vertices: int) -> np.ndarray:
    """(m,) bool: faces whose vertex set an earlier face already has (any winding)."""
    s = np.sort(faces, axis=1).astype(np.int64)
    if n_vertices < 2_000_000:  # n^3 < 2^63: one integer key per face, a 1D sort
        key = (s[:, 0] * n_vertices + s[:, 1]) * n_vertices + s[:, 2]
        _, first = np.unique(key, return_index=True)
    else:
        first, _ = unique_rows(s)
    rep = np.ones(len(faces), bool)
    rep[first] = False
    return rep


def _build(
    vertices: np.ndarray, faces: np.ndarray, job: JobProfile, units: Units | None, name: str
) -> tuple[TargetSurface, list[Finding]]:
    findings: list[Finding] = []
    label = f"mesh file {name}" if name != "arrays" else "mesh arrays"
    if len(vertices) == 0:
        raise MeshError(f"{label} has no vertices")
    # per column: a reduction along axis 0 of an (n, 3) array walks it with a stride; a NaN or
    # an infinity anywhere makes its column's extremes non-finite, so they also check the values
    lo = np.array([vertices[:, j].min() for j in range(3)])
    hi = np.array([vertices[:, j].max() for j in range(3)])
    if not (np.isfinite(lo).all() and np.isfinite(hi).all()):
        bad = int((~np.isfinite(vertices).all(axis=1)).sum())
        raise MeshError(f"{label} has {bad} vertices with NaN or infinite coordinates")
    if len(faces) == 0:
        raise MeshError(f"{label} has no faces (a point cloud or path, not a mesh)")
    if faces.min() < 0 or faces.max() >= len(vertices):
        raise MeshError(f"{label} has face indices outside 0..{len(vertices) - 1}")
    unit = Units.MM if units is None else Units(units)
    raw_diag = float(np.linalg.norm(hi - lo))
    if unit.to_mm != 1.0:
        vertices = vertices * unit.to_mm
    diag = raw_diag * unit.to_mm
    if diag == 0.0:
        raise MeshError(f"{label} has zero total area (all vertices coincide)")
    if not diag <= ABSURD_EXTENT_MM:
        raise MeshError(
            f"{label} is {diag:.3g} mm across, more than {ABSURD_EXTENT_MM:.0e} mm: no casting "
            "surface is that large; check the file and its units (--units)"
        )
    findings += _units_check(raw_diag, unit, label)

    # merge duplicate vertices
    n_in, m_in = len(vertices), len(faces)
    grid = 1.0 / (diag * 1e-9)
    q = vertices * grid
    q = np.rint(q, out=q).astype(np.int64)
    # rounding a product is monotone: the columns' extremes are those of the rounded extremes
    lo_mm, hi_mm = (lo, hi) if unit.to_mm == 1.0 else (lo * unit.to_mm, hi * unit.to_mm)
    bounds = (np.rint(lo_mm * grid).astype(np.int64), np.rint(hi_mm * grid).astype(np.int64))
    first, inv = unique_rows(q, bounds)
    vertices = vertices[first]
    faces = inv[faces]
    n_exact = len(vertices)
    # faces that do not share their corners (a soup: corners written per face, a little
    # apart): welded within a thousandth of the median edge, else the analysis sees a heap
    # of loose triangles
    welded_mm = 0.0
    if _looks_unwelded(len(vertices), len(faces)):
        vertices, faces, welded_mm = _weld(vertices, faces)
    # drop degenerate and duplicate faces (the duplicates are sorted out in a thread: numpy's
    # sorts and loops let the interpreter go)
    from wirecut.workers import threaded

    merged_faces, n_merged = faces, len(vertices)
    duplicate = threaded(lambda: _repeated_faces(merged_faces, n_merged))
    e01, e02 = _face_edges(vertices, faces)
    area2 = np.linalg.norm(cross(e01, e02), axis=1)
    sides = (e01, e02 - e01, e02)
    longest2 = np.max([np.einsum("ij,ij->i", e, e) for e in sides], axis=0)
    repeated = (
        (faces[:, 0] == faces[:, 1]) | (faces[:, 1] == faces[:, 2]) | (faces[:, 0] == faces[:, 2])
    )
    keep = ~repeated & (area2 > 1e-12 * longest2) & (area2 > 0.0)
    keep &= ~duplicate.result()
    faces = faces[keep]
    if len(faces) == 0:
        raise MeshError(f"{label} has zero total area (every face is degenerate)")
    used = np.flatnonzero(np.bincount(faces.ravel(), minlength=len(vertices)))
    remap = np.full(len(vertices), -1, np.int64)
    remap[used] = np.arange(len(used))
    vertices, faces = vertices[used], remap[faces]
    merged, dropped = n_in - n_exact, m_in - len(faces)
    if merged or dropped:
        findings.append(
            Finding(
                "mesh-cleaned",
                f"{label}: merged {merged} duplicate vertices, dropped {dropped} degenerate or "
                f"duplicate faces, {len(faces)} faces remain",
                severity=Severity.INFO,
            )
        )
    if welded_mm > 0.0:
        findings.append(
            Finding(
                "mesh-welded",
                f"{label}: the faces did not share their corners; {n_exact - len(vertices)} "
                f"corners within {welded_mm:.3g} mm of another were welded into one",
                severity=Severity.INFO,
            )
        )
    if _looks_unwelded(len(vertices), len(faces)):
        findings.append(
            Finding(
                "unconnected-faces",
                f"{label}: {len(vertices)} vertices for {len(faces)} faces: most faces share no "
                "corner with their neighbours even after welding, so curvature, reach and "
                "pieces are unreliable; weld the mesh's vertices in the modelling tool",
            )
        )

    # the faces' doubled-area normals as given are worked out in a thread meanwhile: they
    # stand when the winding was consistent already (most meshes)
    given_faces, given_vertices = faces, vertices
    given = threaded(lambda: cross(*_face_edges(given_vertices, given_faces)))
    faces, comp, table = _orient_consistently(faces, len(vertices))
    doubled = given.result()
    if not np.array_equal(faces, given_faces):
        doubled = cross(*_face_edges(vertices, faces))
    counts = table.counts
    w = waste_direction(job.mold.up, job.mold.side)
    closed = bool((counts == 2).all())
    if closed:
        signed_volume = np.einsum("ij,ij->i", vertices[faces[:, 0]], doubled).sum() / 6.0
        if signed_volume < 0:
            faces, doubled = faces[:, ::-1].copy(), -doubled
        normals = doubled / np.linalg.norm(doubled, axis=1, keepdims=True)
        facing = normals @ w > CLOSED_FACING_THRESHOLD
        if not facing.any():
            raise MeshError(f"{label} is a closed solid with no face looking toward the waste side")
        faces, normals, doubled = faces[facing], normals[facing], doubled[facing]
        used = np.flatnonzero(np.bincount(faces.ravel(), minlength=len(vertices)))
        remap = np.full(len(vertices), -1, np.int64)
        remap[used] = np.arange(len(used))
        vertices, faces = vertices[used], remap[faces]
    else:
        # per component: flip when the area-weighted mean normal looks away from the waste side
        score = np.bincount(comp, weights=doubled @ w)
        flip = score[comp] < 0
        faces[flip] = faces[flip][:, ::-1]
        doubled[flip] = -doubled[flip]
        normals = doubled / np.linalg.norm(doubled, axis=1, keepdims=True)
        table = table.rewound(flip)
    face_areas = 0.5 * np.linalg.norm(doubled, axis=1)
    findings += _tilt_check(vertices, doubled, w, job.mold.side, label)
    target = TargetSurface(
        vertices=vertices,
        faces=faces,
        face_normals=normals,
        up=np.asarray(job.mold.up, float) / np.linalg.norm(job.mold.up),
        side=job.mold.side,
        merged_vertices=int(merged),
        dropped_faces=int(dropped),
        was_closed=closed,
        source_units=unit,
        source=name,
    )
    # the same faces: hand over what intake measured instead of computing it again
    target.__dict__["face_areas"] = face_areas
    if not closed:
        target.__dict__["edge_table"] = table
    if target.area_mm2 <= 0.0:
        raise MeshError(f"{label} has zero total area")
    return target, findings


#: A surface's faces share their corners: about half a vertex per face inside, a few more
#: along the boundary (a strip one triangle wide has one per face). More than this many per
#: face means most faces stand alone (a soup has three).
_UNWELDED_VERTICES_PER_FACE = 1.5
#: The welding distance, as a share of the median edge.
_WELD_SHARE = 1e-3


def _looks_unwelded(n_vertices: int, n_faces: int) -> bool:
    """Too many vertices for the faces to share corners (see the constant above)."""
    return n_faces >= 4 and n_vertices > _UNWELDED_VERTICES_PER_FACE * n_faces


def _weld(vertices: np.ndarray, faces: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """Merge the vertices closer than ``_WELD_SHARE`` of the median edge (chains of such pairs
    become one vertex, the lowest index's position): scipy's KD-tree pairs, joined by
    connected components. Returns the vertices, the faces re-indexed, and the distance (mm).
    Degenerate faces this makes are dropped by the caller."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components
    from scipy.spatial import cKDTree

    edges = np.linalg.norm(vertices[faces] - vertices[np.roll(faces, 1, axis=1)], axis=2)
    tol = _WELD_SHARE * float(np.median(edges))
    if not tol > 0.0:
        return vertices, faces, 0.0
    pairs = cKDTree(vertices).query_pairs(tol, output_type="ndarray")
    if len(pairs) == 0:
        return vertices, faces, 0.0
    n = len(vertices)
    graph = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(n, n))
    _, label = connected_components(graph, directed=False)
    first = np.full(label.max() + 1, n, np.int64)
    np.minimum.at(first, label, np.arange(n))  # each group's lowest index, in index order
    rank = np.empty(len(first), np.int64)
    rank[np.argsort(first, kind="stable")] = np.arange(len(first))
    return vertices[np.sort(first)], rank[label][faces], tol


def _tilt_check(
    vertices: np.ndarray, doubled: np.ndarray, waste: np.ndarray, side: MoldSide, label: str
) -> list[Finding]:
    """An info finding when the surface leans well away from the profile's up and would be
    much lower turned to its mean normal: the blanks' height (foam, travel) follows the
    surface's height along up, and a mesh exported in a building's frame often leans.

    ``doubled`` (m, 3) are the faces' normals times twice their areas, toward the waste side;
    their sum is along the area-weighted mean normal."""
    total = doubled.sum(axis=0)
    length = float(np.linalg.norm(total))
    if len(vertices) == 0 or length <= 0.0:
        return []
    mean = total / length
    angle = float(np.degrees(np.arccos(np.clip(mean @ waste, -1.0, 1.0))))
    height_now = float(np.ptp(vertices @ waste))
    height_then = float(np.ptp(vertices @ mean))
    if angle <= _TILT_HINT_DEG or height_then > _TILT_HINT_HEIGHT_SHARE * height_now:
        return []
    up = mean if MoldSide(side) is MoldSide.BELOW else -mean
    return [
        Finding(
            "tilted-part",
            f"{label}: the surface's mean normal lies {angle:.0f} deg from the profile's up; "
            f"with mold.up = [{up[0]:.3f}, {up[1]:.3f}, {up[2]:.3f}] it would stand "
            f"{height_then:.0f} mm high instead of {height_now:.0f} mm (lower blanks, less "
            "foam): set it in the job profile if the part may be turned",
            severity=Severity.INFO,
        )
    ]


def _units_check(raw_diag: float, unit: Units, label: str) -> list[Finding]:
    """An attention finding when the size in mm is implausible, naming a ``--units`` fix."""
    lo, hi = _PLAUSIBLE_DIAGONAL_MM
    diag = raw_diag * unit.to_mm
    if lo <= diag <= hi:
        return []
    fits = [u for u in Units if u is not unit and lo <= raw_diag * u.to_mm <= hi]
    # every unit that gives a plausible size, the one closest (in ratio) to a typical 1.5 m
    # mold first, each with the size it gives: the file alone cannot tell metres from feet
    fits.sort(key=lambda u: abs(np.log(raw_diag * u.to_mm / 1500.0)))
    size = "small" if diag < lo else "large"
    hint = (
        "; ".join(
            f"if the file is in {u.value}, pass --units {u.value} "
            f"({raw_diag * u.to_mm / 1000.0:.3g} m across)"
            for u in fits
        )
        if fits
        else "no --units choice brings it into range; check the file's scale"
    )
    return [
        Finding(
            "suspicious-units",
            f"{label} is {diag:.3g} mm across, suspiciously {size}: {hint}",
        )
    ]
