"""Benchmark cases of the renderer: images/s against the per-sample renderer, labels against the
reference tracer.

Speed (``render_speed``): one scene, 128 x 128, five objects on a floor, each cube about 35
pixels across, measured three ways in one run: the per-sample renderer
(``genfield.render.naive``, 48 model queries per ray and box) as the baseline; the grid
renderer with codes that repeat (grids cached); and the grid renderer with fresh codes for
every object of every image (every grid baked anew through ``model.bake``). Until a trained
field can be made inside a benchmark run, the model is ``genfield.render.standin.MlpStandIn``:
a field-sized network (4 x 128 ReLU trunk, 6-octave Fourier features, colour head) on every
query, perturbing analytic solids; its bake is the field's coarse-to-fine bake.

Labels (``render_labels``): built-in assets as analytic fields (``AnalyticModel.from_assets``),
rendered by the grid renderer and traced by ``genfield.render.reference``: mask IoU and
median depth error.
"""

from __future__ import annotations

import math
import statistics
import time

import numpy as np

from genfield.bench import Figure, case

SIZE = 128
OBJECTS = 5


def _scene(codes: list[tuple[np.ndarray, np.ndarray]], *, shadows: bool = False):
    from genfield.render.camera import look_at, make_camera, orbit_position
    from genfield.scene import Backdrop, CodeChoice, Light, Pose, Scene, SceneObject

    target = (0.0, 0.0, 0.12)
    cam = make_camera(SIZE, SIZE, look_at(orbit_position(target, 1.3, math.radians(35), math.radians(-60)),
                                          target), fov_deg=50.0)
    objects = []
    for i, (shape, appearance) in enumerate(codes):
        a = 2 * math.pi * i / len(codes)
        pose = Pose.from_ypr((0.3 * math.cos(a), 0.3 * math.sin(a), 0.15), a, 0.0, 0.0, 0.15)
        objects.append(SceneObject(i + 1, f"object-{i}", CodeChoice(tuple(map(float, shape))),
                                   CodeChoice(tuple(map(float, appearance))), pose))
    return Scene(0, 0, cam, tuple(objects), Light(shadows=shadows), Backdrop(floor=True))


def _timed(fn, repeats: int) -> tuple[float, float]:
    """Median wall seconds and median CPU seconds (all threads) of ``fn()``."""
    wall, cpu = [], []
    for _ in range(repeats):
        start, start_cpu = time.perf_counter(), time.process_time()
        fn()
        wall.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    return statistics.median(wall), statistics.median(cpu)


@case("render_speed", "images/s at 128x128, 5 objects: per-sample baseline, repeating and fresh codes")
def _render_speed(quick: bool) -> list[Figure]:
    import torch

    from genfield.render.analytic import AnalyticModel, demo_shapes
    from genfield.render.cache import GridCache
    from genfield.render.naive import render_per_sample
    from genfield.render.options import RenderOptions, auto_resolution
    from genfield.render.renderer import cube_pixels, render_scene
    from genfield.render.standin import MlpStandIn

    options = RenderOptions(threads=2)
    torch.set_num_threads(options.threads)
    model = MlpStandIn(AnalyticModel(demo_shapes()))
    baked = [0, 0.0]  # bakes, seconds in model.bake
    plain_bake = model.bake

    def bake(shape, appearance, resolution):
        start = time.perf_counter()
        grid = plain_bake(shape, appearance, resolution)
        baked[0] += 1
        baked[1] += time.perf_counter() - start
        return grid

    model.bake = bake  # type: ignore[method-assign]
    codes = [(model.shape_code(i), model.appearance_code(i)) for i in range(OBJECTS)]
    scene = _scene(codes)
    cache = GridCache(1 << 30, disk=False)  # in memory: the disk's speed is not what is measured

    before = model.queries
    base_s, base_cpu = _timed(lambda: render_per_sample(model, scene), 1 if quick else 3)
    base_queries = (model.queries - before) / (1 if quick else 3)

    render_scene(model, scene, options=options, cache=cache)  # bakes once: then all hits
    repeat_s, repeat_cpu = _timed(lambda: render_scene(model, scene, options=options, cache=cache),
                                  5 if quick else 20)
    shadow_scene = _scene(codes, shadows=True)
    shadow_s, _ = _timed(lambda: render_scene(model, shadow_scene, options=options, cache=cache),
                         3 if quick else 10)

    g = np.random.default_rng(0)
    fresh_s, bake_s = [], []
    for _ in range(2 if quick else 5):
        fresh = [(s + g.normal(0.0, 0.01, s.shape).astype(np.float32),
                  a + g.normal(0.0, 0.01, a.shape).astype(np.float32)) for s, a in codes]
        new_scene = _scene(fresh)
        baked[:] = [0, 0.0]
        start = time.perf_counter()
        out = render_scene(model, new_scene, options=options, cache=cache)
        fresh_s.append(time.perf_counter() - start)
        bake_s.append(baked[1])
        if baked[0] != OBJECTS or out.weights.shape[0] != OBJECTS:
            raise RuntimeError(f"expected {OBJECTS} new grids an image, baked {baked[0]}")
    resolutions = sorted({auto_resolution(options, cube_pixels(scene.camera, o.pose)) for o in scene.objects})
    fresh_wall = statistics.median(fresh_s)
    note = ("MLP stand-in (4x128 ReLU + Fourier features on every query, analytic geometry); "
            "other work shared the CPU")
    return [
        Figure("baseline_images_per_s", 1.0 / base_s, "images/s",
               f"per-sample renderer, {base_queries / 1e3:.0f}k queries an image; {note}"),
        Figure("baseline_cpu_seconds", base_cpu, "s", "CPU time an image, both threads"),
        Figure("repeating_images_per_s", 1.0 / repeat_s, "images/s", "aim >= 10; grids cached"),
        Figure("repeating_speedup", base_s / repeat_s, "x", "target >= 10x the baseline"),
        Figure("repeating_cpu_seconds", repeat_cpu, "s",
               "CPU time an image, both threads (what the image costs, whatever else runs)"),
        Figure("repeating_shadows_images_per_s", 1.0 / shadow_s, "images/s", "same, with shadow rays"),
        Figure("fresh_images_per_s", 1.0 / fresh_wall, "images/s", "aim >= 5; 5 new code pairs an image"),
        Figure("fresh_speedup", base_s / fresh_wall, "x", "target >= 4x the baseline"),
        Figure("fresh_bake_seconds_per_code", statistics.median(bake_s) / OBJECTS, "s",
               f"in model.bake (the stand-in's coarse-to-fine bake, {'/'.join(map(str, resolutions))}^3 "
               "grids): the fresh path's cost is this, the rest is the cached path's"),
    ]


@case("render_labels", "masks and depth of the grid renderer against the reference tracer")
def _render_labels(quick: bool) -> list[Figure]:
    import torch

    from genfield.assets import make_builtin
    from genfield.render.analytic import AnalyticModel
    from genfield.render.cache import GridCache
    from genfield.render.options import RenderOptions
    from genfield.render.reference import trace_reference
    from genfield.render.renderer import render_scene

    torch.set_num_threads(2)
    families = ["cup", "bowl", "bottle", "hex_nut", "l_bracket", "washer", "bushing"]
    assets = [make_builtin(f, i) for i, f in enumerate(families[: 5 if quick else 7])]
    model = AnalyticModel.from_assets(assets)
    ious, depth_cells, object_ious = [], [], []
    for view in range(1 if quick else 3):
        pick = [(view + k) % len(assets) for k in range(OBJECTS)]
        scene = _scene([(model.shape_code(i), model.appearance_code(i)) for i in pick])
        out = render_scene(model, scene, options=RenderOptions(threads=2), cache=GridCache(1 << 30, disk=False))
        ref = trace_reference(scene.camera, [(assets[i], o.pose) for i, o in zip(pick, scene.objects, strict=True)],
                              light=scene.light, backdrop=scene.backdrop)
        a, b = out.instance_ids > 0, ref.instance > 0
        ious.append((a & b).sum() / (a | b).sum())
        for k, obj in enumerate(scene.objects):
            va, vb = out.instance_ids == obj.id, ref.instance == k + 1
            if vb.any():
                object_ious.append((va & vb).sum() / (va | vb).sum())
        same = (out.instance_ids == np.where(b, np.asarray([0] + [o.id for o in scene.objects])[ref.instance], 0)) & b
        cell = scene.objects[0].pose.scale * 2.0 / 64
        depth_cells.append(float(np.median(np.abs(out.depth[same] - ref.depth[same]))) / cell)
    return [
        Figure("mask_iou", float(np.mean(ious)), "IoU",
               "all objects' masks vs the reference tracer; analytic built-in assets (not yet trained); "
               "target >= 0.95"),
        Figure("object_mask_iou_min", float(np.min(object_ious)), "IoU", "worst single object's visible mask"),
        Figure("object_mask_iou_median", float(np.median(object_ious)), "IoU", "median over objects"),
        Figure("depth_error_cells", float(np.median(depth_cells)), "cells",
               "median |depth - reference| in 65^3 grid cells, where both see the same object"),
    ]
