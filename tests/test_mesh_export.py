"""GLB, PLY and OBJ files reload through trimesh with vertices, colours, names and transforms."""

from __future__ import annotations

import numpy as np
import pytest
import trimesh

from genfield.colour import srgb_to_linear, to_srgb8
from genfield.errors import UsageError
from genfield.field.grid import occupancy_from_sdf
from genfield.mesh.export import ScenePart, floor_part, write_mesh, write_scene
from genfield.mesh.extract import extract_mesh
from genfield.scene import Pose


@pytest.fixture(scope="module")
def mesh():
    def occ(p):
        return occupancy_from_sdf(np.linalg.norm(p, axis=1) - 0.5, 2.0 / 32)

    def colour(p):
        return np.clip((p + 1.0) / 2.0, 0.0, 1.0)

    return extract_mesh(occ, colour, resolution=32, coarse=8)[0]


@pytest.mark.parametrize("suffix", [".ply", ".obj", ".glb"])
def test_single_mesh_round_trip(mesh, tmp_path, suffix):
    path = write_mesh(mesh, tmp_path / f"ball{suffix}")
    back = trimesh.load(path, force="mesh", process=False)
    assert len(back.vertices) == len(mesh.vertices)
    assert np.array_equal(back.faces, mesh.faces)
    assert np.allclose(back.vertices, mesh.vertices, atol=1e-6)
    rgb = back.visual.vertex_colors[:, :3]
    if suffix == ".glb":
        # glTF 2.0 spec 3.7.2.1: COLOR_0 is a linear multiplier, so it holds linear values
        assert np.array_equal(rgb, np.round(mesh.colours * 255).astype(np.uint8))
    else:
        # PLY/OBJ hold display colours: 8-bit sRGB (IEC 61966-2-1) of the linear field colour
        assert np.array_equal(rgb, to_srgb8(mesh.colours))
    assert not list(tmp_path.glob(".*tmp"))  # the temporary file was renamed away


def test_refuses_unknown_formats_and_missing_folders(mesh, tmp_path):
    with pytest.raises(UsageError, match="glb"):
        write_mesh(mesh, tmp_path / "ball.stl")
    with pytest.raises(UsageError, match="folder"):
        write_mesh(mesh, tmp_path / "no" / "ball.ply")
    with pytest.raises(UsageError, match="glb"):
        write_scene([ScenePart("1-ball", mesh, np.eye(4))], tmp_path / "scene.ply")


def test_failed_write_keeps_the_old_file(mesh, tmp_path, monkeypatch):
    target = tmp_path / "ball.ply"
    target.write_bytes(b"old")

    def broken(*_a, **_k):
        raise RuntimeError("disk full")

    monkeypatch.setattr("genfield.mesh.export._export_bytes", broken)
    with pytest.raises(RuntimeError):
        write_mesh(mesh, target)
    assert target.read_bytes() == b"old"


def test_scene_nodes_keep_names_and_transforms(mesh, tmp_path):
    poses = {
        "1-cup": Pose.from_ypr((0.3, -0.1, 0.04), 0.7, 0.0, 0.0, 0.04),
        "2-bowl": Pose.from_ypr((-0.2, 0.25, 0.06), -1.2, 0.1, 0.2, 0.06),
    }
    parts = [ScenePart(name, mesh, pose.object_to_world()) for name, pose in poses.items()]
    floor = floor_part(parts, (0.6, 0.5, 0.4))
    path = write_scene([*parts, floor], tmp_path / "scene.glb")
    back = trimesh.load(path)  # a trimesh.Scene
    assert set(back.graph.nodes_geometry) == {"1-cup", "2-bowl", "floor"}
    for name, pose in poses.items():
        transform, geometry = back.graph.get(name)
        assert np.allclose(transform, pose.object_to_world(), atol=1e-6)
        assert len(back.geometry[geometry].vertices) == len(mesh.vertices)
    floor_mesh = back.geometry[back.graph.get("floor")[1]]
    assert np.allclose(floor_mesh.vertices[:, 2], 0.0)  # the floor is z = 0
    assert np.allclose(floor_mesh.visual.vertex_colors[0, :3] / 255,
                       srgb_to_linear(np.array([0.6, 0.5, 0.4])), atol=0.5 / 255)
    # placed in world coordinates, every object lies over the floor square
    world = back.to_geometry()
    lo, hi = floor_mesh.vertices.min(axis=0), floor_mesh.vertices.max(axis=0)
    assert np.all(world.vertices[:, :2] >= lo[:2] - 1e-6) and np.all(world.vertices[:, :2] <= hi[:2] + 1e-6)
