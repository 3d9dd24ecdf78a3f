"""Chamfer distance checked on surfaces whose distance is known in closed form."""

from __future__ import annotations

import math

import numpy as np
import pytest

from genfield.field.grid import occupancy_from_sdf
from genfield.mesh.extract import extract_mesh
from genfield.mesh.quality import chamfer_by_family, chamfer_distance, mesh_chamfer, sample_surface
from genfield.seeds import rng


def sphere_points(radius: float, count: int, seed: int) -> np.ndarray:
    # uniform on a sphere: normalised isotropic Gaussian vectors (Muller 1959)
    g = rng(seed, 0, "test").standard_normal((count, 3))
    return radius * g / np.linalg.norm(g, axis=1, keepdims=True)


def test_concentric_spheres_are_their_radial_gap_apart():
    # every point of one sphere is |r1 - r2| from the other: accuracy = completeness = gap
    a, b = sphere_points(0.5, 20_000, 1), sphere_points(0.6, 20_000, 2)
    assert chamfer_distance(a, b) == pytest.approx(0.1, rel=0.03)
    assert chamfer_distance(a, a) == 0.0


def test_surface_samples_are_uniform_by_area():
    mesh, _ = extract_mesh(lambda p: occupancy_from_sdf(np.linalg.norm(p, axis=1) - 0.6, 1 / 32),
                           resolution=64)
    pts = sample_surface(mesh, 40_000, rng(0, 0, "test"))
    # Archimedes' hat-box theorem: z is uniform on [-r, r] for area-uniform points on a sphere
    hist, _ = np.histogram(pts[:, 2], bins=8, range=(-0.6, 0.6))
    assert np.all(np.abs(hist / len(pts) - 1 / 8) < 0.01)


def test_extracted_sphere_is_close_to_the_true_sphere():
    mesh, _ = extract_mesh(lambda p: occupancy_from_sdf(np.linalg.norm(p, axis=1) - 0.6, 1 / 32),
                           resolution=64)
    cd = mesh_chamfer(mesh, sphere_points(0.6, 50_000, 3), rng(0, 0, "test"), count=50_000)
    # the sampling floor: two independent 50k samples of one sphere are on average
    # 1 / (2 sqrt(density)) = sqrt(area / n) / 2 apart, the mean nearest-neighbour distance of
    # a planar Poisson process (Clark & Evans 1954), ~0.0048 here
    floor = chamfer_distance(sphere_points(0.6, 50_000, 4), sphere_points(0.6, 50_000, 5))
    assert cd < floor + 0.002
    assert floor == pytest.approx(0.5 * math.sqrt(4 * math.pi * 0.36 / 50_000), rel=0.3)


def test_chamfer_by_family_averages_within_each_family():
    mesh, _ = extract_mesh(lambda p: occupancy_from_sdf(np.linalg.norm(p, axis=1) - 0.6, 1 / 32),
                           resolution=64)
    items = [("near", mesh, sphere_points(0.62, 20_000, 6)),
             ("near", mesh, sphere_points(0.64, 20_000, 7)),
             ("far", mesh, sphere_points(0.7, 20_000, 8))]
    scores = chamfer_by_family(items, rng(0, 0, "test"), count=20_000)
    assert set(scores) == {"near", "far"}
    # concentric spheres: the Chamfer distance is the radial gap (mean of 0.02 and 0.04 for "near")
    assert scores["near"] == pytest.approx(0.03, abs=0.004)
    assert scores["far"] == pytest.approx(0.1, abs=0.004)
