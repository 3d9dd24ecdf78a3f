"""Mesh extraction checked against closed forms and against dense extraction of the same field."""

from __future__ import annotations

import math

import numpy as np
import pytest
import trimesh

from genfield.field.grid import occupancy_from_sdf
from genfield.mesh.benchmarks import cup_sdf  # thin walls (0.08) and a thin ring handle
from genfield.mesh.extract import extract_mesh
from genfield.mesh.refine import dense_occupancy, refine_occupancy

RES = 128
WIDTH = 2.0 / RES  # sigmoid transition about one cell wide


def sphere_sdf(p: np.ndarray, r: float = 0.6, centre=(0.0, 0.0, 0.0)) -> np.ndarray:
    return np.linalg.norm(p - np.asarray(centre), axis=1) - r


def torus_sdf(p: np.ndarray, big: float = 0.55, small: float = 0.25) -> np.ndarray:
    # distance to a torus about z: |(|p_xy| - R, p_z)| - r (the standard torus distance)
    q = np.hypot(p[:, 0], p[:, 1]) - big
    return np.hypot(q, p[:, 2]) - small


def occupancy(sdf):
    return lambda p: occupancy_from_sdf(sdf(p), WIDTH)


@pytest.mark.parametrize(
    "name, sdf, area, volume",
    [
        # sphere: A = 4 pi r^2, V = 4/3 pi r^3
        ("sphere", sphere_sdf, 4 * math.pi * 0.6**2, 4 / 3 * math.pi * 0.6**3),
        # torus (Pappus's centroid theorems): A = 4 pi^2 R r, V = 2 pi^2 R r^2
        ("torus", torus_sdf, 4 * math.pi**2 * 0.55 * 0.25, 2 * math.pi**2 * 0.55 * 0.25**2),
    ],
)
def test_analytic_area_and_volume_within_one_percent(name, sdf, area, volume):
    mesh, stats = extract_mesh(occupancy(sdf), resolution=RES)
    tm = trimesh.Trimesh(mesh.vertices, mesh.faces, process=False)
    assert tm.is_watertight, name  # trimesh: every edge shared by exactly two faces
    assert tm.area == pytest.approx(area, rel=0.01), name
    assert tm.volume == pytest.approx(volume, rel=0.01), name  # positive: faces wind outward
    assert stats.fraction < 0.15


@pytest.mark.parametrize("width, mean_degrees", [(WIDTH, 0.6), (WIDTH / 4, 3.0)])
def test_normals_point_out_along_the_true_normal(width, mean_degrees):
    # A sphere's outward normal is radial. The sharp field (a quarter-cell transition, as
    # sharp as a trained field) is where grid-gradient normals measured 7 degrees mean error.
    mesh, _ = extract_mesh(lambda p: occupancy_from_sdf(sphere_sdf(p), width), resolution=RES)
    radial = mesh.vertices / np.linalg.norm(mesh.vertices, axis=1, keepdims=True)
    cosine = np.clip(np.sum(mesh.normals * radial, axis=1), -1.0, 1.0)
    assert np.all(cosine > 0.98)
    assert np.degrees(np.arccos(cosine)).mean() < mean_degrees


@pytest.mark.parametrize("sdf, coarse", [(sphere_sdf, 16), (torus_sdf, 32), (cup_sdf, 16)])
def test_coarse_to_fine_equals_dense_on_a_fraction_of_points(sdf, coarse):
    fn = occupancy(sdf)
    refined = refine_occupancy(fn, RES, coarse=coarse)
    dense = dense_occupancy(fn, RES)
    a, b = refined.inside, dense.inside
    iou = (a & b).sum() / (a | b).sum()
    assert iou >= 0.999
    assert refined.points_evaluated <= 0.15 * dense.points_evaluated
    assert dense.points_evaluated == (RES + 1) ** 3
    # every evaluated value is the field's own, and every cell crossing the surface is evaluated
    assert np.array_equal(refined.values[refined.evaluated], dense.values[refined.evaluated])


def test_counts_every_query_and_respects_the_chunk():
    sizes = []

    def fn(p):
        sizes.append(len(p))
        return occupancy_from_sdf(sphere_sdf(p), 2.0 / 32)

    grid = refine_occupancy(fn, 32, coarse=8, chunk=1000)
    assert sum(sizes) == grid.points_evaluated
    assert max(sizes) <= 1000
    assert grid.evaluated.sum() == grid.points_evaluated  # no point queried twice


def test_a_part_the_coarse_grid_hits_is_found_one_between_its_points_is_not():
    # Two spheres; the small one (r = 0.05) sits in the middle of a coarse cell of a 16-cell
    # grid (spacing 0.125: its centre is 0.108 from the nearest coarse point), as documented.
    small_centre = (0.5 + 0.0625, 0.5 + 0.0625, 0.5 + 0.0625)

    def sdf(p):
        return np.minimum(sphere_sdf(p, 0.3), sphere_sdf(p, 0.05, small_centre))

    fn = occupancy(sdf)
    dense = dense_occupancy(fn, RES).inside
    missed = refine_occupancy(fn, RES, coarse=16).inside
    # spacing 1/32: r = 0.05 > sqrt(3)/2 * 1/32 = 0.027, so the ball must hold a grid point
    found = refine_occupancy(fn, RES, coarse=64).inside
    assert np.array_equal(found, dense)
    assert (dense & ~missed).sum() > 0.9 * (4 / 3 * math.pi * 0.05**3) / (2 / RES) ** 3


def test_floaters_are_removed_by_volume_fraction():
    def sdf(p):
        return np.minimum(sphere_sdf(p, 0.5), sphere_sdf(p, 0.1, (0.75, 0.75, 0.75)))

    kept_all, _ = extract_mesh(occupancy(sdf), resolution=64, coarse=16)
    cleaned, _ = extract_mesh(occupancy(sdf), resolution=64, coarse=16, min_component_fraction=0.05)
    parts = trimesh.Trimesh(kept_all.vertices, kept_all.faces, process=False).split(only_watertight=False)
    assert len(parts) == 2  # the small sphere holds 0.8% of the volume
    main = trimesh.Trimesh(cleaned.vertices, cleaned.faces, process=False)
    assert len(main.split(only_watertight=False)) == 1
    assert main.is_watertight
    assert main.volume == pytest.approx(4 / 3 * math.pi * 0.5**3, rel=0.02)


def test_colours_come_from_the_colour_field_at_the_vertices():
    def colour(p):
        return np.clip((p + 1.0) / 2.0, 0.0, 1.0)

    mesh, stats = extract_mesh(occupancy(sphere_sdf), colour, resolution=32, coarse=8)
    assert mesh.colours is not None and mesh.colours.dtype == np.float32
    assert np.allclose(mesh.colours, colour(mesh.vertices), atol=1e-6)
    assert stats.colour_points == len(mesh.vertices)


def test_real_size_scales_lengths():
    mesh, _ = extract_mesh(occupancy(sphere_sdf), resolution=64, coarse=16)
    small = mesh.scaled(0.05)  # half-extent 5 cm: radius 0.6 becomes 3 cm
    radius = np.linalg.norm(small.vertices, axis=1)
    assert radius.mean() == pytest.approx(0.03, rel=0.005)
    with pytest.raises(ValueError):
        mesh.scaled(0.0)


def test_empty_field_gives_an_empty_mesh():
    mesh, stats = extract_mesh(lambda p: np.zeros(len(p), np.float32), resolution=32, coarse=8)
    assert len(mesh.faces) == 0
    assert stats.points_evaluated == 9**3  # nothing to refine past the coarse grid


def test_resolution_must_be_coarse_times_a_power_of_two():
    with pytest.raises(ValueError, match="power of two"):
        refine_occupancy(occupancy(sphere_sdf), 96, coarse=16)
