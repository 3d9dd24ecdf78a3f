"""Benchmark cases of the renderer: images/s against the per-sample renderer, labels against the
reference tracer.

The model is the quick preset (16 workshop parts), trained once and kept in the cache by
``genfield demo`` (``genfield.commands.demo.demo_model``; the first run trains it, about a
minute on two free cores).

Speed (``render_speed``): one scene, 128 x 128, five objects on a floor, each cube about 32
pixels across, measured three ways in one run: the per-sample renderer
(``genfield.render.naive``, 48 network queries per ray and box) as the baseline; the grid
renderer with codes that repeat (grids cached in memory); and the grid renderer with fresh
codes for every object of every image (prior draws, so every grid is baked anew by
``model.bake``; the time spent there is reported on its own).

Labels (``render_labels``): masks and depth of the renderer against ``genfield.render.reference``
on built-in assets, twice: the trained model on its own training assets (model and renderer
together), and the assets' exact SDFs as an ``AnalyticModel`` (the renderer alone).
"""

from __future__ import annotations

import math
import re
import statistics
import time

import numpy as np

from genfield.bench import Figure, case, quick_model

SIZE = 128
OBJECTS = 5
NOTE = "trained quick-preset model"


def _scene(codes: list[tuple[np.ndarray, np.ndarray]], *, shadows: bool = False):
    """The benchmark scene: ``codes`` on a ring on the floor, seen from above at 35 degrees."""
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


def _rows(model, count: int, start: int = 0) -> list[int]:
    """``count`` code rows spread over the families (every 4th row: the preset's four families)."""
    n = len(model.codebook.names)
    return [(start + 4 * k + k // 4) % n for k in range(count)]


@case("render_speed", "images/s at 128x128, 5 objects: per-sample baseline, repeating and fresh codes")
def _render_speed(quick: bool) -> list[Figure]:
    import torch

    from genfield.render.cache import GridCache
    from genfield.render.naive import render_per_sample
    from genfield.render.options import RenderOptions, auto_resolution
    from genfield.render.renderer import cube_pixels, render_scene
    from genfield.seeds import rng

    model = quick_model()
    options = RenderOptions(threads=2)
    torch.set_num_threads(options.threads)
    baked = [0, 0.0]  # bakes, seconds in model.bake
    plain_bake = model.bake

    def bake(shape, appearance, resolution):
        start = time.perf_counter()
        grid = plain_bake(shape, appearance, resolution)
        baked[0] += 1
        baked[1] += time.perf_counter() - start
        return grid

    model.bake = bake  # type: ignore[method-assign]
    book = model.codebook
    codes = [(book.shape[i], book.appearance[i]) for i in _rows(model, OBJECTS)]
    scene = _scene(codes)
    cache = GridCache(1 << 30, disk=False)  # in memory: the disk's speed is not what is measured

    queries = [0]
    plain_query = model.query

    def query(points, shape, appearance):
        queries[0] += len(points)
        return plain_query(points, shape, appearance)

    model.query = query  # type: ignore[method-assign]
    base_repeats = 1 if quick else 3
    base_s, base_cpu = _timed(lambda: render_per_sample(model, scene), base_repeats)

    render_scene(model, scene, options=options, cache=cache)  # bakes once: then all hits
    repeat_s, repeat_cpu = _timed(lambda: render_scene(model, scene, options=options, cache=cache),
                                  5 if quick else 20)
    shadow_scene = _scene(codes, shadows=True)
    shadow_s, _ = _timed(lambda: render_scene(model, shadow_scene, options=options, cache=cache),
                         3 if quick else 10)

    def fresh(opts: RenderOptions, images: int, *, keep_shapes: bool = False) -> tuple[float, float]:
        """Median wall seconds of an image of 5 prior draws, and of its time in model.bake;
        ``keep_shapes``: the draws' appearances on the scene's own named shapes."""
        wall, in_bake = [], []
        for image in range(images):
            g = rng(0, image, "bench:fresh-codes")
            draws = [book.sample_prior(g) for _ in range(OBJECTS)]
            if keep_shapes:
                draws = [(shape, appearance) for (shape, _), (_, appearance) in zip(codes, draws, strict=True)]
            new_scene = _scene(draws)
            baked[:] = [0, 0.0]
            start = time.perf_counter()
            render_scene(model, new_scene, options=opts, cache=GridCache(1 << 30, disk=False))
            wall.append(time.perf_counter() - start)
            in_bake.append(baked[1])
            if baked[0] != OBJECTS:
                raise RuntimeError(f"expected {OBJECTS} new grids an image, baked {baked[0]}")
        return statistics.median(wall), statistics.median(in_bake)

    fresh_wall, fresh_bake = fresh(options, 2 if quick else 5)
    # the scene's shapes were baked once above; the first image bakes them again (they enter
    # the model's geometry memo), so the median is of images that paint memoised shapes
    painted_wall, painted_bake = fresh(options, 3 if quick else 5, keep_shapes=True)
    coarse = RenderOptions(threads=2, cells_per_pixel=1.0)
    coarse_wall, coarse_bake = fresh(coarse, 2 if quick else 5)
    coarse_res = sorted({auto_resolution(coarse, cube_pixels(scene.camera, o.pose)) for o in scene.objects})
    resolutions = sorted({auto_resolution(options, cube_pixels(scene.camera, o.pose)) for o in scene.objects})
    return [
        Figure("baseline_images_per_s", 1.0 / base_s, "images/s",
               f"per-sample renderer, {queries[0] / base_repeats / 1e3:.0f}k network queries an image; {NOTE}"),
        Figure("baseline_cpu_seconds", base_cpu, "s", "CPU time an image, both threads"),
        Figure("repeating_images_per_s", 1.0 / repeat_s, "images/s", "aim >= 10; grids cached"),
        Figure("repeating_speedup", base_s / repeat_s, "x", "target >= 10x the baseline"),
        Figure("repeating_cpu_seconds", repeat_cpu, "s",
               "CPU time an image, both threads (what an image costs, whatever else runs)"),
        Figure("repeating_shadows_images_per_s", 1.0 / shadow_s, "images/s", "same, with shadow rays"),
        Figure("fresh_images_per_s", 1.0 / fresh_wall, "images/s", "aim >= 5; 5 prior draws an image"),
        Figure("fresh_speedup", base_s / fresh_wall, "x", "target >= 4x the baseline"),
        Figure("fresh_bake_seconds_per_code", fresh_bake / OBJECTS, "s",
               f"inside model.bake ({'/'.join(map(str, resolutions))}^3 grids); the rest of a fresh "
               "image costs what a cached one does"),
        Figure("fresh_appearance_images_per_s", 1.0 / painted_wall, "images/s",
               "named shapes, appearance drawn from the prior for every object of every image "
               "(the shapes' geometry memoised: only the colour head runs)"),
        Figure("fresh_appearance_speedup", base_s / painted_wall, "x", "same, against the baseline"),
        Figure("fresh_appearance_bake_seconds_per_code", painted_bake / OBJECTS, "s", "inside model.bake"),
        Figure("fresh_detail1_images_per_s", 1.0 / coarse_wall, "images/s",
               "fresh codes at recipe 'detail 1' (one grid cell a pixel: "
               f"{'/'.join(map(str, coarse_res))}^3 grids here); aim >= 5"),
        Figure("fresh_detail1_speedup", base_s / coarse_wall, "x", "same, against the baseline; target >= 4x"),
        Figure("fresh_detail1_bake_seconds_per_code", coarse_bake / OBJECTS, "s", "inside model.bake"),
    ]


def _iou_and_depth(out, ref, scene, cell: float) -> tuple[float, list[float], float]:
    """Mask IoU of all objects, per-object visible-mask IoUs, median |depth error| / cell."""
    a, b = out.instance_ids > 0, ref.instance > 0
    per_object = []
    for k, obj in enumerate(scene.objects):
        va, vb = out.instance_ids == obj.id, ref.instance == k + 1
        if vb.any():
            per_object.append(float((va & vb).sum() / (va | vb).sum()))
    ids = np.asarray([0] + [o.id for o in scene.objects])[ref.instance]
    same = (out.instance_ids == ids) & b
    depth = float(np.median(np.abs(out.depth[same] - ref.depth[same]))) / cell
    return float((a & b).sum() / (a | b).sum()), per_object, depth


def _builtin(source: str):
    """The built-in asset named by a model's source string ``builtin:<family>:seed=<s>:index=<i>``."""
    from genfield.assets import make_builtin

    m = re.fullmatch(r"builtin:(\w+):seed=(\d+):index=(\d+)", source)
    if m is None:
        raise ValueError(f"not a built-in source: {source!r}")
    return make_builtin(m.group(1), int(m.group(3)), int(m.group(2)))


@case("render_labels", "masks and depth of the renderer against the reference tracer")
def _render_labels(quick: bool) -> list[Figure]:
    import torch

    from genfield.assets import make_builtin
    from genfield.render.analytic import AnalyticModel
    from genfield.render.cache import GridCache
    from genfield.render.options import RenderOptions
    from genfield.render.reference import trace_reference
    from genfield.render.renderer import render_scene

    torch.set_num_threads(2)
    options = RenderOptions(threads=2)
    cell = 0.15 * 2.0 / 64  # a 65^3 grid cell of the scene's objects, metres
    views = 1 if quick else 3

    trained = quick_model()
    assets = [_builtin(s) for s in trained.sources]
    t_iou, t_obj, t_depth, t_iou_detail1 = [], [], [], []
    for view in range(views):
        rows = _rows(trained, OBJECTS, start=view)
        scene = _scene([(trained.codebook.shape[i], trained.codebook.appearance[i]) for i in rows])
        out = render_scene(trained, scene, options=options, cache=GridCache(1 << 30, disk=False))
        ref = trace_reference(scene.camera, [(assets[i], o.pose) for i, o in zip(rows, scene.objects, strict=True)],
                              light=scene.light, backdrop=scene.backdrop)
        iou, per_object, depth = _iou_and_depth(out, ref, scene, cell)
        t_iou.append(iou)
        t_obj += per_object
        t_depth.append(depth)
        coarse = render_scene(trained, scene, options=RenderOptions(threads=2, cells_per_pixel=1.0),
                              cache=GridCache(1 << 30, disk=False))
        t_iou_detail1.append(_iou_and_depth(coarse, ref, scene, cell)[0])

    families = ["cup", "bowl", "bottle", "hex_nut", "l_bracket", "washer", "bushing"]
    exact = [make_builtin(f, i) for i, f in enumerate(families)]
    analytic = AnalyticModel.from_assets(exact)
    a_iou, a_obj, a_depth = [], [], []
    for view in range(views):
        pick = [(view + k) % len(exact) for k in range(OBJECTS)]
        scene = _scene([(analytic.shape_code(i), analytic.appearance_code(i)) for i in pick])
        out = render_scene(analytic, scene, options=options, cache=GridCache(1 << 30, disk=False))
        ref = trace_reference(scene.camera, [(exact[i], o.pose) for i, o in zip(pick, scene.objects, strict=True)],
                              light=scene.light, backdrop=scene.backdrop)
        iou, per_object, depth = _iou_and_depth(out, ref, scene, cell)
        a_iou.append(iou)
        a_obj += per_object
        a_depth.append(depth)
    return [
        Figure("trained_mask_iou", float(np.mean(t_iou)), "IoU",
               "trained quick-preset model on its training assets vs the reference tracer; target >= 0.95"),
        Figure("trained_object_iou_min", float(np.min(t_obj)), "IoU", "worst single object's visible mask"),
        Figure("trained_depth_error_cells", float(np.median(t_depth)), "cells",
               "median |depth - reference| in 65^3 grid cells, where both see the same object"),
        Figure("trained_mask_iou_detail1", float(np.mean(t_iou_detail1)), "IoU",
               "same, at recipe 'detail 1' (one grid cell a pixel)"),
        Figure("analytic_mask_iou", float(np.mean(a_iou)), "IoU",
               "exact SDFs of 7 families' assets baked and rendered (the renderer alone)"),
        Figure("analytic_object_iou_min", float(np.min(a_obj)), "IoU", "worst single object's visible mask"),
        Figure("analytic_depth_error_cells", float(np.median(a_depth)), "cells", "as above"),
    ]
