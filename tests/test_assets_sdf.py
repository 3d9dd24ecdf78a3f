"""Signed distances and surface sampling against closed forms and reference libraries."""

from __future__ import annotations

import math

import numpy as np
import pytest
import trimesh
from skimage.measure import marching_cubes

from genfield.assets import sdf
from genfield.assets.surface import sample_csg_surface, surface_area

# Closed forms (Pappus's centroid theorems for the torus; the usual sphere and cylinder ones):
# torus V = 2 pi^2 R r^2, A = 4 pi^2 R r; sphere V = 4/3 pi r^3, A = 4 pi r^2;
# capped cylinder V = pi r^2 (2h), A = 2 pi r^2 + 2 pi r (2h).
SHAPES = [
    ("torus", sdf.Torus(0.6, 0.25), 2 * math.pi**2 * 0.6 * 0.25**2, 4 * math.pi**2 * 0.6 * 0.25),
    ("sphere", sdf.Sphere(0.7), 4 / 3 * math.pi * 0.7**3, 4 * math.pi * 0.7**2),
    ("cylinder", sdf.Cylinder(0.55, 0.62), math.pi * 0.55**2 * 1.24,
     2 * math.pi * 0.55**2 + 2 * math.pi * 0.55 * 1.24),
]


@pytest.mark.parametrize(("name", "node", "volume", "area"), SHAPES, ids=[s[0] for s in SHAPES])
def test_monte_carlo_volume_matches_closed_form(name, node, volume, area):
    g = np.random.default_rng(1)
    p = g.uniform(-1, 1, (400_000, 3))
    inside = (node.distance(p) < 0).mean()
    estimate = 8.0 * inside
    sigma = 8.0 * math.sqrt(inside * (1 - inside) / len(p))  # binomial standard error
    assert abs(estimate - volume) < 4 * sigma


@pytest.mark.parametrize(("name", "node", "volume", "area"), SHAPES, ids=[s[0] for s in SHAPES])
def test_marching_cubes_mesh_volume_and_area_match_closed_form(name, node, volume, area):
    # scikit-image's marching cubes of the sampled SDF, measured by trimesh: at 97^3 over the
    # cube the faceting error is well under 1% for these radii.
    n = 97
    axis = np.linspace(-1, 1, n)
    grid = np.stack(np.meshgrid(axis, axis, axis, indexing="ij"), -1).reshape(-1, 3)
    values = node.distance(grid).reshape(n, n, n)
    verts, faces, _, _ = marching_cubes(values, 0.0, spacing=(2 / (n - 1),) * 3)
    mesh = trimesh.Trimesh(verts - 1.0, faces)
    assert mesh.is_watertight
    assert abs(mesh.volume) == pytest.approx(volume, rel=0.01)
    # marching cubes cuts sharp edges (the cylinder's rims) a little short: 2% there
    assert mesh.area == pytest.approx(area, rel=0.02 if name == "cylinder" else 0.01)


@pytest.mark.parametrize(("name", "node", "volume", "area"), SHAPES, ids=[s[0] for s in SHAPES])
def test_surface_sampler_area_and_points_lie_on_the_surface(name, node, volume, area):
    g = np.random.default_rng(2)
    assert surface_area(node, 50_000, g) == pytest.approx(area, rel=1e-9)  # one primitive: exact
    pts = sample_csg_surface(node, 20_000, g)
    assert np.abs(node.distance(pts)).max() < 1e-9


def test_csg_area_counts_shared_faces_once():
    # An L-shaped prism: cross-section area 0.36 and perimeter 4 extruded by 1 -> A = 4.72.
    legs = sdf.Union((sdf.Box((0, 0, 0), (1, 1, 0.2)), sdf.Box((0, 0, 0), (0.2, 1, 1))))
    g = np.random.default_rng(3)
    estimate = surface_area(legs, 400_000, g)
    assert estimate == pytest.approx(4.72, rel=0.01)


def test_sampler_is_uniform_by_area_on_a_cylinder():
    # Caps hold 2 pi r^2 of the area 2 pi r^2 + 4 pi r h: for r = 0.5, h = 0.6, 0.294...
    node = sdf.Cylinder(0.5, 0.6)
    pts = sample_csg_surface(node, 40_000, np.random.default_rng(4))
    on_caps = np.mean(np.abs(np.abs(pts[:, 2]) - 0.6) < 1e-9)
    share = (2 * math.pi * 0.25) / (2 * math.pi * 0.25 + 2 * math.pi * 0.5 * 1.2)
    assert on_caps == pytest.approx(share, abs=4 * math.sqrt(share * (1 - share) / 40_000))
    cap = pts[np.abs(pts[:, 2] - 0.6) < 1e-9]
    r = np.linalg.norm(cap[:, :2], axis=1)
    assert np.mean(r < 0.25) == pytest.approx(0.25, abs=0.02)  # uniform on a disc: P(r < R/2) = 1/4


def test_revolved_polygon_is_exact_against_brute_force_distance():
    # An annulus profile revolved; exact distance checked against the nearest of many surface
    # samples (scipy's k-d tree as the reference nearest-neighbour search), outside and inside.
    from scipy.spatial import cKDTree

    node = sdf.Revolved(np.array([(0.3, -0.2), (0.8, -0.2), (0.8, 0.2), (0.3, 0.2)]))
    g = np.random.default_rng(5)
    surf = sample_csg_surface(node, 400_000, g)
    q = g.uniform(-1, 1, (2000, 3))
    naive, _ = cKDTree(surf).query(q)
    assert np.allclose(np.abs(node.distance(q)), naive, atol=0.01)
    assert np.abs(np.abs(node.distance(q)) - naive).mean() < 0.003


def test_hex_prism_is_exact_and_has_the_right_size():
    node = sdf.HexPrism(0.5, 0.3)
    # a point straight out from a flat (+y) and from a corner (+x, circumradius 0.5 / cos 30)
    assert node.distance(np.array([[0.0, 0.9, 0.0]]))[0] == pytest.approx(0.4)
    assert node.distance(np.array([[1.0, 0.0, 0.0]]))[0] == pytest.approx(1.0 - 0.5 / math.cos(math.pi / 6))
    g = np.random.default_rng(6)
    p = g.uniform(-1, 1, (400_000, 3))
    volume = 8 * (node.distance(p) < 0).mean()
    assert volume == pytest.approx(2 * math.sqrt(3) * 0.25 * 0.6, rel=0.02)  # hexagon 2 sqrt(3) a^2


def test_bounds_hold_the_solid():
    nodes = [sdf.Moved(sdf.Torus(0.5, 0.1), sdf.rotation_x(math.pi / 2), (0.1, 0.0, 0.2)),
             sdf.Difference(sdf.Box((-0.5, -0.4, -0.3), (0.5, 0.4, 0.3)), (sdf.Sphere(0.35),)),
             sdf.Scaled(sdf.HexPrism(5.0, 2.0), 8.0, (1.0, 2.0, 3.0))]
    g = np.random.default_rng(7)
    for node in nodes:
        lo, hi = node.bounds()
        p = g.uniform(-1, 1, (200_000, 3))
        inside = p[node.distance(p) < 0]
        assert (inside >= lo - 1e-9).all() and (inside <= hi + 1e-9).all()
        assert np.allclose(inside.min(axis=0), lo, atol=0.03)
        assert np.allclose(inside.max(axis=0), hi, atol=0.03)
