"""Imported meshes: trimesh primitives written to files and read back through the importer."""

from __future__ import annotations

import numpy as np
import pytest
import trimesh
from PIL import Image

from genfield.assets import load_mesh_assets, mesh_inside
from genfield.assets.asset import FIT
from genfield.colour import srgb_to_linear
from genfield.errors import SourceError

RNG = np.random.default_rng(0)
PROBES = RNG.uniform(-1, 1, (30_000, 3))


def _one(path, **kw):
    (asset,) = load_mesh_assets(path, **kw)
    return asset


@pytest.mark.parametrize("suffix", [".stl", ".ply", ".obj", ".glb"])
def test_box_occupancy_matches_the_analytic_box(tmp_path, suffix):
    # trimesh.creation.box: the axis-aligned box of the given extents; after normalisation the
    # largest half-extent is FIT, so the inside test is |x| <= FIT * extents / max(extents).
    box = trimesh.creation.box(extents=(2.0, 1.0, 0.5))
    box.apply_translation((5.0, 1.0, 2.0))
    box.export(tmp_path / f"box{suffix}")
    a = _one(tmp_path / f"box{suffix}")
    half = FIT * np.array([1.0, 0.5, 0.25])
    if suffix == ".glb":  # glTF is y-up: file +y becomes +z
        half = half[[0, 2, 1]]
    ref = (np.abs(PROBES) <= half).all(axis=1)
    assert np.mean(a.occupancy(PROBES) == ref) > 0.9995
    assert a.parameters["watertight"] and a.family == "mesh" and a.name == "box"
    assert a.offset == pytest.approx((5.0, 1.0, 2.0))
    assert a.metric_half_extent == pytest.approx(1.0 / FIT)


def test_offset_and_scale_map_object_points_back_to_the_file(tmp_path):
    cyl = trimesh.creation.cylinder(radius=20.0, height=30.0, sections=32)
    cyl.apply_translation((100.0, -50.0, 7.0))
    cyl.export(tmp_path / "part.glb")
    a = _one(tmp_path / "part.glb", metres_per_unit=0.001)  # a file in millimetres
    turn = np.array([[1.0, 0, 0], [0, 0, -1.0], [0, 1.0, 0]])  # the glTF y-up turn, +y -> +z
    back = np.asarray(a.offset) + (a.metric_half_extent * a.mesh.vertices) @ turn  # R^T x
    assert np.allclose(np.sort(back, axis=0), np.sort(cyl.vertices * 0.001, axis=0), atol=1e-9)
    assert np.abs(a.mesh.vertices).max() == pytest.approx(FIT)


def test_cylinder_and_sphere_against_analytic_inside_tests(tmp_path):
    # A 64-gon prism lies between the inscribed cylinder r cos(pi / 64) and r; an icosphere
    # between its faces' smallest distance from the centre and 1. Probes in those thin
    # bands are left out; everywhere else the answer is the analytic one.
    cyl = trimesh.creation.cylinder(radius=1.0, height=1.0, sections=64)
    cyl.export(tmp_path / "cyl.ply")
    a = _one(tmp_path / "cyl.ply")
    r, z = np.linalg.norm(PROBES[:, :2], axis=1) / FIT, np.abs(PROBES[:, 2]) / FIT
    inner = np.cos(np.pi / 64)
    clear = (r < inner) | (r > 1.0)
    ref = (r < 1.0) & (z <= 0.5)
    assert np.array_equal(a.occupancy(PROBES)[clear], ref[clear])

    ball = trimesh.creation.icosphere(subdivisions=3)
    ball.export(tmp_path / "ball.stl")
    b = _one(tmp_path / "ball.stl")
    inradius = np.min(np.abs(np.einsum("ij,ij->i", ball.face_normals, ball.triangles[:, 0])))
    rho = np.linalg.norm(PROBES, axis=1) / FIT
    clear = (rho < inradius) | (rho > 1.0)
    assert np.array_equal(b.occupancy(PROBES)[clear], (rho < 1.0)[clear])


def test_holes_are_outvoted_and_reported(tmp_path):
    ball = trimesh.creation.icosphere(subdivisions=3)
    keep = np.ones(len(ball.faces), bool)
    keep[RNG.choice(len(ball.faces), size=len(ball.faces) // 50, replace=False)] = False  # 2%
    holed = trimesh.Trimesh(ball.vertices, ball.faces[keep])
    holed.export(tmp_path / "holed.ply")
    a = _one(tmp_path / "holed.ply")
    assert not a.parameters["watertight"] and "NOT watertight" in a.parameters["inside_test"]
    assert a.parameters["inside_split_share"] > 0  # some rays passed through a hole
    rho = np.linalg.norm(PROBES, axis=1) / FIT
    clear = (rho < 0.98) | (rho > 1.0)
    assert np.mean(a.occupancy(PROBES)[clear] == (rho < 1.0)[clear]) > 0.995


def test_inside_test_is_the_same_in_any_chunk_size(tmp_path, monkeypatch):
    ball = trimesh.creation.icosphere(subdivisions=2)
    ball.export(tmp_path / "b.ply")
    a = _one(tmp_path / "b.ply")
    whole = a.occupancy(PROBES[:2000])
    monkeypatch.setattr(mesh_inside, "CHUNK", 7)
    assert np.array_equal(a.occupancy(PROBES[:2000]), whole)


def test_parts_of_a_scene_are_merged_and_overlaps_count_as_inside(tmp_path):
    # Two cubes of side 1 centred at x = -0.4 and x = +0.4 overlap in x in [-0.1, 0.1]; the
    # union spans x in [-0.9, 0.9], so after normalisation (half-extent 0.9 -> FIT) it is
    # the box |x| <= FIT, |y|, |z| <= FIT / 1.8. Parity alone would call the overlap outside.
    scene = trimesh.Scene()
    for x in (-0.4, 0.4):
        scene.add_geometry(trimesh.creation.box(extents=(1.0, 1.0, 1.0)),
                           transform=trimesh.transformations.translation_matrix((x, 0, 0)))
    scene.export(tmp_path / "pair.glb")
    a = _one(tmp_path / "pair.glb")
    assert a.parameters["parts"] == 2 and "signed crossings" in a.parameters["inside_test"]
    ref = (np.abs(PROBES[:, 0]) <= FIT) & (np.abs(PROBES[:, 1:]) <= FIT / 1.8).all(axis=1)
    assert np.mean(a.occupancy(PROBES) == ref) > 0.999


def test_vertex_and_face_colours(tmp_path):
    ball = trimesh.creation.icosphere(subdivisions=1)
    vc = RNG.integers(0, 256, (len(ball.vertices), 4)).astype(np.uint8)
    vc[:, 3] = 255
    ball.visual.vertex_colors = vc
    ball.export(tmp_path / "vc.ply")
    a = _one(tmp_path / "vc.ply")
    mesh = a.mesh
    corner = mesh.faces[:, 0]
    got = a.geometry.face_colour_srgb(np.arange(len(mesh.faces)), mesh.vertices[corner])
    assert np.abs(got - vc[corner, :3] / 255.0).max() < 1 / 255 + 1e-6  # sRGB in, sRGB out

    cube = trimesh.creation.box()
    fc = RNG.integers(0, 256, (len(cube.faces), 4)).astype(np.uint8)
    fc[:, 3] = 255
    cube.visual.face_colors = fc
    cube.export(tmp_path / "fc.ply")
    b = _one(tmp_path / "fc.ply")
    faces = np.arange(len(b.mesh.faces))
    got = b.geometry.face_colour_srgb(faces, b.mesh.triangles_center)
    assert np.abs(got - fc[:, :3] / 255.0).max() < 1 / 255 + 1e-6
    # ground-truth colours come out linear
    pts, srgb = b.geometry.surface(500, np.random.default_rng(1))
    assert np.abs(np.abs(pts).max(axis=1) - FIT).max() < 1e-9  # on the cube's faces


def _textured_quad() -> trimesh.Trimesh:
    """A unit square in the xy plane, uv = (x, y), on a 2x1 texture: left red, right green."""
    verts = np.array([[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0]], dtype=np.float64)
    quad = trimesh.Trimesh(verts, [[0, 1, 2], [0, 2, 3]], process=False)
    image = Image.fromarray(np.array([[[255, 0, 0], [0, 255, 0]]], dtype=np.uint8))
    quad.visual = trimesh.visual.TextureVisuals(uv=verts[:, :2], image=image)
    return quad


@pytest.mark.parametrize("suffix", [".obj", ".glb"])
def test_texture_is_sampled_through_uvs(tmp_path, suffix):
    _textured_quad().export(tmp_path / f"quad{suffix}")
    a = _one(tmp_path / f"quad{suffix}", up="z")
    assert a.parameters["colour"] == ["texture"]
    # texel centres are at u = 0.25 (red) and 0.75 (green); the quad maps to [-FIT, FIT]^2
    pts = np.array([[-FIT / 2, 0.0, 0.0], [FIT / 2, 0.0, 0.0]])
    faces = np.array([a.mesh.ray.intersects_first(p[None] + [0, 0, 1.0], [[0, 0, -1.0]])[0]
                      for p in pts])
    got = a.geometry.face_colour_srgb(faces, pts)
    want = srgb_to_linear(np.array([[1.0, 0.0, 0.0], [0.0, 1.0, 0.0]]))
    if suffix == ".glb":  # trimesh writes a baseColorFactor; glTF 2.0: it multiplies in linear
        want = want * a.geometry.colour.vertex_factor[0]
    assert np.abs(srgb_to_linear(got) - want).max() < 1 / 255


def test_errors_name_the_file(tmp_path):
    def fails(path, match):
        with pytest.raises(SourceError, match=match) as err:
            load_mesh_assets(path)
        assert str(path) in err.value.one_line()

    (tmp_path / "text.stl").write_text("hello, not a mesh")
    fails(tmp_path / "text.stl", "not a mesh")
    (tmp_path / "empty.ply").write_bytes(b"")
    fails(tmp_path / "empty.ply", "not a mesh")
    (tmp_path / "points.obj").write_text("v 0 0 0\nv 1 0 0\nv 0 1 0\n")
    fails(tmp_path / "points.obj", "no triangles")
    trimesh.PointCloud(RNG.random((10, 3))).export(tmp_path / "cloud.ply")
    fails(tmp_path / "cloud.ply", "no triangles")
    (tmp_path / "flat.obj").write_text("v 0 0 0\nv 1 0 0\nv 2 0 0\nf 1 2 3\n")
    fails(tmp_path / "flat.obj", "degenerate")
    (tmp_path / "notes.txt").write_text("x")
    fails(tmp_path / "notes.txt", "not a supported mesh format")
    fails(tmp_path / "missing.obj", "no such file")
    (tmp_path / "nothing").mkdir()
    fails(tmp_path / "nothing", "no mesh files")
    fails(tmp_path / "nothing" / "*.glb", "matches no mesh files")


def test_unreadable_textures_and_materials_name_the_file(tmp_path):
    _textured_quad().export(tmp_path / "quad.obj")
    textures = sorted(tmp_path.glob("*.png"))
    assert textures
    textures[0].write_bytes(b"\x89PNG broken")
    with pytest.raises(SourceError, match="unreadable texture") as err:
        load_mesh_assets(tmp_path / "quad.obj")
    assert "quad.obj" in err.value.one_line()
    for mtl in tmp_path.glob("*.mtl"):
        mtl.unlink()
    with pytest.raises(SourceError, match="unreadable material"):
        load_mesh_assets(tmp_path / "quad.obj")

    data = _textured_quad().export(file_type="glb")
    at = data.find(b"\x89PNG")
    (tmp_path / "quad.glb").write_bytes(data[:at] + b"\0" * 16 + data[at + 16:])
    with pytest.raises(SourceError, match="unreadable texture") as err:
        load_mesh_assets(tmp_path / "quad.glb")
    assert "quad.glb" in err.value.one_line()


def test_folder_and_glob_sources_with_stable_unique_names(tmp_path):
    for sub in ("a", "b"):
        (tmp_path / sub).mkdir()
        trimesh.creation.box().export(tmp_path / sub / "part.stl")
    trimesh.creation.icosphere(1).export(tmp_path / "a" / "ball.ply")
    (tmp_path / "a" / "readme.txt").write_text("skipped in folders")
    assert [x.name for x in load_mesh_assets(tmp_path / "a")] == ["ball", "part"]
    names = [x.name for x in load_mesh_assets(str(tmp_path / "**" / "part.stl"))]
    assert names[0] == "part" and names[1].startswith("part-") and len(set(names)) == 2
    again = [x.name for x in load_mesh_assets(str(tmp_path / "**" / "part.stl"))]
    assert again == names
    first, second = load_mesh_assets(str(tmp_path / "**" / "part.stl"))
    assert first.content_hash == second.content_hash  # same bytes, same cache entry


def test_inconsistent_faces_fall_back_to_parity(tmp_path):
    ball = trimesh.creation.icosphere(subdivisions=3)
    faces = ball.faces.copy()
    faces[::7] = faces[::7, ::-1]  # every seventh face turned inside out
    trimesh.Trimesh(ball.vertices, faces, process=False).export(tmp_path / "mixed.ply")
    a = _one(tmp_path / "mixed.ply")
    assert "crossing parity" in a.parameters["inside_test"]
    rho = np.linalg.norm(PROBES, axis=1) / FIT
    clear = (rho < 0.98) | (rho > 1.0)
    assert np.mean(a.occupancy(PROBES)[clear] == (rho < 1.0)[clear]) > 0.999


def test_ground_truth_of_a_mesh(tmp_path, monkeypatch):
    from genfield.assets import sample_ground_truth

    monkeypatch.setenv("GENFIELD_CACHE", str(tmp_path / "cache"))
    cube = trimesh.creation.box()
    cube.visual.face_colors = [200, 40, 40, 255]
    cube.export(tmp_path / "red.ply")
    a = _one(tmp_path / "red.ply")
    gt = sample_ground_truth(a, 4000, seed=0)
    assert np.abs(np.abs(gt.surface_points).max(axis=1) - FIT).max() < 1e-6
    assert np.allclose(gt.surface_colour, srgb_to_linear(np.array([200, 40, 40]) / 255), atol=1e-6)
    ref = (np.abs(gt.points) <= FIT).all(axis=1)
    assert np.mean(gt.occupancy == ref) > 0.999
    assert "signed crossings" in gt.meta["inside_test"]
