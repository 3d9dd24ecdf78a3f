"""A test double for the dataset writer: spheres over a floor, traced exactly with numpy.

The writer only needs ``draw(index) -> Scene`` and ``render(scene) -> RenderOutput``; this
pipeline gives both with labels known in closed form (ray-sphere and ray-plane
intersections), so tests can check the files against exact answers without a trained model.
Its "recipe" is a JSON object of parameters (size, objects, classes, floor, delay).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass

import numpy as np

from genfield.dataset.job import JobSpec
from genfield.render.camera import look_at, make_camera, orbit_position, pixel_rays
from genfield.render.output import RenderOutput
from genfield.scene import Backdrop, CodeChoice, Light, Pose, Scene, SceneObject
from genfield.seeds import rng

FACTORY = "_dataset_doubles:sphere_pipeline"
ASSETS = [("cup", 0), ("washer", 0)]  # built-in family assets, the codes the recipe names
RECIPE = """# cups and washers on a floor, near enough to be a few hundred pixels each
model "model.gfm"
dataset {
  images 6
  seed 11
  train 0.5
  val 0.25
  test 0.25
  outputs image, mask, depth, normals
}
camera {
  size 64x64
  fov 40deg
  target (0, 0, 3cm)
  distance 55cm..60cm
  elevation 35deg..55deg
  azimuth 0deg..360deg
}
backdrop {
  colour #c8ccd2
  floor #707070
}
object cup {
  count 2
  asset "cup-0000"
  scale 4cm..5cm
  yaw 0deg..360deg
  inside (-30cm, -30cm)..(30cm, 30cm)
  on floor
}
object washer {
  count 1 to 2
  asset "washer-0000"
  scale 4cm..5cm
  yaw 0deg..360deg
  inside (-30cm, -30cm)..(30cm, 30cm)
  on floor
}
"""
CLASSES = ("ball", "bead")


def spec(count: int = 6, seed: int = 3, *, size: int = 32, objects: int = 3, floor: bool = True,
         outputs=("image", "mask", "depth", "normals")) -> JobSpec:
    params = {"size": size, "objects": objects, "floor": floor}
    return JobSpec(
        recipe_files=(("spheres.json", json.dumps(params, sort_keys=True)),),
        model_name="none.bin", model_bytes=b"analytic spheres", seed=seed, count=count,
        splits=(("train", 0.6), ("val", 0.2), ("test", 0.2)), outputs=tuple(outputs),
        classes=CLASSES, factory=FACTORY,
    )


def draw(params: dict, seed: int, index: int) -> Scene:
    g = rng(seed, index, "spheres")
    size = params["size"]
    target = (0.0, 0.0, 0.15)
    cam = make_camera(size, size, look_at(orbit_position(target, 1.6, 0.5, g.uniform(0, 2 * math.pi)),
                                          target), fov_deg=45.0)
    objects = []
    for k in range(params["objects"]):
        r = float(g.uniform(0.08, 0.18))
        xy = g.uniform(-0.35, 0.35, 2)
        code = tuple(float(v) for v in g.normal(size=3))
        colour = tuple(float(v) for v in g.uniform(0.1, 0.9, 3))
        pose = Pose.from_ypr((float(xy[0]), float(xy[1]), r), float(g.uniform(-3, 3)), 0.0, 0.0, r)
        objects.append(SceneObject(
            id=k + 1, label=CLASSES[k % 2],
            shape=CodeChoice(code, {"kind": "prior", "temperature": 1.0}),
            appearance=CodeChoice(colour, {"kind": "named", "name": f"colour-{k}"}),
            pose=pose))
    return Scene(index=index, seed=seed, camera=cam, objects=tuple(objects), light=Light(),
                 backdrop=Backdrop(floor=params["floor"]), values={"k": params["objects"]})


def trace(scene: Scene) -> RenderOutput:
    """Exact first hits of pixel-centre rays with the spheres and the floor z = 0."""
    cam = scene.camera
    h, w = cam.height, cam.width
    rays = pixel_rays(cam)
    o, d = rays.origins, rays.directions  # (N, 3)
    n = o.shape[0]
    ts = []
    for obj in scene.objects:  # |o + t d - c|^2 = r^2, nearest root
        oc = o - obj.pose.t
        b = np.einsum("ij,ij->i", oc, d)
        disc = b * b - (np.einsum("ij,ij->i", oc, oc) - obj.pose.scale**2)
        t = -b - np.sqrt(np.maximum(disc, 0.0))
        ts.append(np.where((disc > 0) & (t > 0), t, np.inf))
    t_obj = np.stack(ts) if ts else np.full((0, n), np.inf)  # (K, N)
    nearest = np.argmin(t_obj, axis=0) if ts else np.zeros(n, int)
    t_near = t_obj.min(axis=0) if ts else np.full(n, np.inf)
    hit = np.isfinite(t_near)
    with np.errstate(divide="ignore", invalid="ignore"):
        t_floor = np.where(d[:, 2] < 0, -o[:, 2] / d[:, 2], np.inf) if scene.backdrop.floor else np.full(n, np.inf)
    t_first = np.minimum(t_near, t_floor)
    depth = np.where(np.isfinite(t_first), t_first * rays.z_per_t, np.inf).astype(np.float32)
    weights = np.zeros((len(ts), n), np.float32)
    if ts:
        weights[nearest[hit], np.flatnonzero(hit)] = 1.0
    normals = np.zeros((n, 3))
    rgb = np.tile(np.array([0.6, 0.62, 0.66]), (n, 1))
    floor_hit = ~hit & np.isfinite(t_floor)
    normals[floor_hit] = (0.0, 0.0, 1.0)
    rgb[floor_hit] = 0.3
    light = np.asarray(scene.light.direction)
    for k, obj in enumerate(scene.objects):
        sel = hit & (nearest == k)
        p = o[sel] + t_near[sel, None] * d[sel]
        nk = (p - obj.pose.t) / obj.pose.scale
        normals[sel] = nk
        rgb[sel] = np.asarray(obj.appearance.vector) * (0.25 + np.maximum(nk @ light, 0.0))[:, None]
    return RenderOutput(
        rgb=np.clip(rgb, 0, 1).reshape(h, w, 3).astype(np.float32),
        depth=depth.reshape(h, w),
        alpha=hit.astype(np.float32).reshape(h, w),
        weights=weights.reshape(len(ts), h, w),
        amodal=np.isfinite(t_obj).reshape(len(ts), h, w),
        normals=normals.reshape(h, w, 3).astype(np.float32),
        object_ids=tuple(o.id for o in scene.objects),
    )


@dataclass(frozen=True)
class SpherePipeline:
    params: dict
    seed: int

    def draw(self, index: int) -> Scene:
        return draw(self.params, self.seed, index)

    def render(self, scene: Scene) -> RenderOutput:
        return trace(scene)


def sphere_pipeline(job: JobSpec) -> SpherePipeline:
    return SpherePipeline(json.loads(job.recipe_text), job.seed)


def tree(root) -> dict[str, str]:
    """sha256 of every file under ``root``, by relative path: two datasets equal byte for byte
    exactly when their trees are equal."""
    import hashlib
    from pathlib import Path

    root = Path(root)
    return {str(p.relative_to(root)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(root.rglob("*")) if p.is_file()}


def tiny_model_file(path, names=("cup-0000", "washer-0000")):
    """A real model file (safetensors + metadata, genfield.field.model.Model.save) whose tiny
    network has fixed pseudo-random weights: untrained, but a genuine model for the whole
    ``genfield render`` path (load_model, baking, rendering) in a fraction of a second."""
    from dataclasses import replace

    import torch

    from genfield.field.codebook import CodeBook
    from genfield.field.config import NetworkConfig, SourcesConfig, TrainConfig
    from genfield.field.model import Model
    from genfield.field.network import FieldNetwork

    net_cfg = NetworkConfig(shape_dim=4, appearance_dim=7, octaves=2, width=16, depth=2,
                            feature_dim=4, colour_width=8)
    network = FieldNetwork(net_cfg)
    g = np.random.default_rng(0)
    with torch.no_grad():
        for p in network.parameters():
            p.copy_(torch.from_numpy(g.normal(0.0, 0.7, tuple(p.shape)).astype(np.float32)))
    n, d = len(names), net_cfg.shape_dim + net_cfg.appearance_dim
    book = CodeBook(names=tuple(names), families=tuple(x.rsplit("-", 1)[0] for x in names),
                    shape=g.normal(size=(n, net_cfg.shape_dim)).astype(np.float32),
                    appearance=g.normal(size=(n, net_cfg.appearance_dim)).astype(np.float32),
                    prior_weights=np.ones(1), prior_means=np.zeros((1, d)),
                    prior_chols=np.eye(d)[None])
    families: dict[str, int] = {}
    for family in book.families:
        families[family] = families.get(family, 0) + 1
    cfg = replace(TrainConfig(), network=net_cfg, sources=SourcesConfig(families=families))
    model = Model(config=cfg, network=network, codebook=book,
                  sources=tuple(f"test:{x}" for x in names))
    model.save(path)
    return path
