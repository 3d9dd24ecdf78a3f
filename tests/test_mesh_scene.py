"""A whole concrete scene as one GLB: one node per object, posed in world coordinates."""

from __future__ import annotations

import numpy as np
import pytest
import trimesh

from genfield.field.grid import occupancy_from_sdf
from genfield.mesh.export import write_scene
from genfield.mesh.from_model import part_name, scene_parts, variant_mesh
from genfield.render.camera import look_at, make_camera
from genfield.scene import Backdrop, CodeChoice, Pose, Scene, SceneObject


class SphereModel:
    """A stand-in for a trained model: shape code [r] is a sphere of radius r, appearance
    code [r, g, b] its linear colour. It answers the two queries meshing uses."""

    def query_occupancy(self, points, shape):
        return occupancy_from_sdf(np.linalg.norm(points, axis=1) - shape[0], 2.0 / 32)

    def query(self, points, shape, appearance):
        return self.query_occupancy(points, shape), np.tile(appearance[:3], (len(points), 1))


def make_scene() -> Scene:
    objects = (
        SceneObject(1, "cup", CodeChoice((0.8,)), CodeChoice((0.9, 0.2, 0.1)),
                    Pose.from_ypr((0.1, 0.0, 0.04), 0.5, 0.0, 0.0, 0.05)),
        SceneObject(2, "bowl", CodeChoice((0.5,)), CodeChoice((0.1, 0.3, 0.8)),
                    Pose.from_ypr((-0.15, 0.1, 0.03), -1.0, 0.2, 0.1, 0.06)),
    )
    camera = make_camera(32, 32, look_at((0.6, -0.6, 0.5), (0.0, 0.0, 0.0)), fov_deg=50.0)
    return Scene(index=0, seed=1, camera=camera, objects=objects,
                 backdrop=Backdrop(floor=True, floor_srgb=(0.5, 0.5, 0.5)))


def test_variant_mesh_uses_the_models_queries():
    mesh, stats = variant_mesh(SphereModel(), np.array([0.6], np.float32),
                               np.array([0.2, 0.4, 0.6], np.float32), resolution=32, coarse=8)
    assert np.allclose(np.linalg.norm(mesh.vertices, axis=1), 0.6, atol=0.01)
    assert np.allclose(mesh.colours, [0.2, 0.4, 0.6])
    assert stats.colour_points == len(mesh.vertices)


def test_scene_objects_are_posed_in_world_coordinates(tmp_path):
    scene = make_scene()
    parts = scene_parts(SphereModel(), scene, resolution=32, coarse=8, floor=True)
    path = write_scene(parts, tmp_path / "scene.glb")
    back = trimesh.load(path)
    assert set(back.graph.nodes_geometry) == {"1-cup", "2-bowl", "floor"}
    for obj in scene.objects:
        name = part_name(obj.id, obj.label)
        transform, geometry = back.graph.get(name)
        assert np.allclose(transform, obj.pose.object_to_world(), atol=1e-6)
        world = trimesh.transform_points(back.geometry[geometry].vertices, transform)
        # a sphere of radius r in the object frame is one of radius s r about t in the world
        distance = np.linalg.norm(world - np.asarray(obj.pose.translation), axis=1)
        assert np.allclose(distance, obj.pose.scale * obj.shape.vector[0], rtol=0.02)
        colour = back.geometry[geometry].visual.vertex_colors[0, :3] / 255.0
        assert np.allclose(colour, obj.appearance.vector, atol=0.5 / 255)  # linear in GLB


def test_floor_is_left_out_unless_asked():
    parts = scene_parts(SphereModel(), make_scene(), resolution=16, coarse=8)
    assert [p.name for p in parts] == ["1-cup", "2-bowl"]


def test_min_part_must_be_a_fraction_below_one():
    with pytest.raises(ValueError, match="min_component_fraction"):
        variant_mesh(SphereModel(), np.array([0.5]), None, resolution=16, coarse=8, min_part=1.0)


def test_real_size_is_the_nearest_training_assets():
    from genfield.assets import make_builtin
    from genfield.errors import UsageError
    from genfield.mesh.from_model import training_half_extent

    class Book:
        names = ("bowl-0002", "part")
        shape = np.array([[0.0, 1.0], [1.0, 0.0]], np.float32)

    sources = ("builtin:bowl:seed=0:index=2", "/data/part.obj")
    name, metres = training_half_extent(Book, sources, np.array([0.1, 0.8]))
    assert name == "bowl-0002" and metres == make_builtin("bowl", 2).metric_half_extent
    with pytest.raises(UsageError, match="real size of 'part'"):
        training_half_extent(Book, sources, np.array([0.9, 0.1]))
