"""Benchmark of ``genfield render``: throughput per worker (1 and 2 workers) and peak memory
at two image counts, on a 5-object 128x128 recipe.

The pipeline is genfield's own (recipe loader, ``draw_scene``, the renderer, the dataset
writer) with an exact analytic field of five built-in family assets standing in for a
trained network (``genfield.dataset.analytic``): no model file ships with genfield, and a
network's baking adds its own cost on top (see the field's benchmarks).
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from genfield.bench import Figure, case

ASSETS = [("cup", 0), ("washer", 0), ("bowl", 0), ("bottle", 0), ("hex_nut", 0)]
RECIPE = """# five objects, one of each family, on a floor: the dataset benchmark
model "model.gfm"
dataset {
  images 100
  seed 5
  train 0.8
  val 0.1
  test 0.1
  outputs image, mask, depth
}
camera {
  size 128x128
  fov 40deg
  target (0, 0, 3cm)
  distance 55cm..65cm
  elevation 30deg..55deg
  azimuth 0deg..360deg
}
light {
  direction (0.3, -0.4, 0.8)
  strength 0.8
  ambient 0.3
}
backdrop {
  colour #c8ccd2
  floor #707070
}
""" + "".join(f"""object {family} {{
  asset "{family}-{index:04d}"
  scale 4cm..5cm
  yaw 0deg..360deg
  inside (-35cm, -35cm)..(35cm, 35cm)
  on floor
}}
""" for family, index in ASSETS)

# Peak memory of one whole run in a fresh process, KiB: the kernel's high-water mark of this
# process image (VmHWM in /proc/self/status, Linux's proc(5)). Not ru_maxrss: Linux keeps it
# across fork and exec, so a child of a large bench process reported the parent's size
# (599 MiB in a full bench run against 323 MiB alone).
_RSS_SCRIPT = """
import resource, sys
from genfield.dataset.benchmarks import bench_job
from genfield.dataset.writer import write_dataset
if __name__ == "__main__":
    write_dataset(sys.argv[2], bench_job(sys.argv[1], int(sys.argv[3])))
    try:
        with open("/proc/self/status") as f:
            print(next(int(line.split()[1]) for line in f if line.startswith("VmHWM:")))
    except OSError:  # not Linux: ru_maxrss (KiB on Linux, bytes on macOS)
        print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""


def bench_job(folder: str | Path, count: int):
    """The benchmark's job, its recipe written into ``folder``."""
    from genfield.dataset.analytic import analytic_job

    path = Path(folder) / "bench.gfr"
    if not path.is_file():
        path.write_text(RECIPE, encoding="utf-8")
    return analytic_job(path, ASSETS, count=count)


class _Clock:
    """A progress "bar" that notes when each image was stored."""

    def __init__(self) -> None:
        self.times: list[float] = []

    def update(self, n: int) -> None:
        self.times.extend([time.perf_counter()] * n)

    def close(self) -> None:
        pass


def _steady_rate(folder: Path, name: str, count: int, workers: int) -> float:
    """Images per second once every worker is warm: the first ``3 * workers`` images (worker
    start, imports, the first bakes of the five assets' grids) are left out of the timing."""
    from genfield.dataset.writer import write_dataset

    clocks: list[_Clock] = []

    def clock(total: int, done: int) -> _Clock:
        clocks.append(_Clock())
        return clocks[-1]

    write_dataset(folder / name, bench_job(folder, count), workers=workers, progress=clock)
    times = clocks[0].times
    skip = 3 * workers
    return (len(times) - 1 - skip) / (times[-1] - times[skip])


def _peak_rss_mib(folder: Path, name: str, count: int) -> float:
    proc = subprocess.run([sys.executable, "-c", _RSS_SCRIPT, str(folder), str(folder / name),
                           str(count)], check=True, capture_output=True, text=True)
    return int(proc.stdout.strip().splitlines()[-1]) / 1024.0


@case("dataset_render", "genfield render of a 5-object 128x128 recipe: images/s per worker "
      "with 1 and 2 workers, peak memory at two image counts")
def _dataset_render(quick: bool) -> list[Figure]:
    n = 24 if quick else 240  # 60 gave scalings of 1.04 and 2.12 in two runs: too short
    small, large = (30, 300) if quick else (100, 1000)
    with tempfile.TemporaryDirectory(prefix="genfield-bench-") as tmp:
        folder = Path(tmp)
        one = _steady_rate(folder, "one", n, 1)
        two = _steady_rate(folder, "two", n, 2)
        start = time.perf_counter()
        rss_small = _peak_rss_mib(folder, "small", small)
        small_seconds = time.perf_counter() - start
        rss_large = _peak_rss_mib(folder, "large", large)
        annotations = json.loads((folder / "large" / "annotations.json").read_text())
    note = "analytic field of 5 family assets (no trained model), real recipe + renderer; "
    return [
        Figure("images_per_s_1_worker", one, "images/s",
               note + f"{n} images, 1 render thread, after 3 warm-up images"),
        Figure("images_per_s_per_worker_2_workers", two / 2, "images/s",
               f"{n} images over 2 worker processes, after 3 warm-up images each"),
        Figure("scaling_2_over_1_workers", two / one, "x", "ideal 2 on 2 free cores"),
        Figure(f"peak_rss_mib_{small}_images", rss_small, "MiB",
               f"one process, serial; whole run {small_seconds:.0f} s"),
        Figure(f"peak_rss_mib_{large}_images", rss_large, "MiB", "same, 10x the images"),
        Figure("peak_rss_ratio_10x_images", rss_large / rss_small, "x", "target ~1 (flat)"),
        Figure(f"annotations_{large}_images", float(len(annotations["annotations"])), "count",
               "visible objects annotated in the large run (a valid dataset was written)"),
    ]
