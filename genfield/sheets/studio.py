"""The studio: one object at the origin under a fixed camera and light, for looking at codes.

Latent sweeps (``genfield sweep MODEL --shape A..B``) and the code sheet of ``genfield
inspect --sheet`` need no recipe: every frame is this one scene with only the codes changed,
so whatever moves between frames is what the latent space holds.

The object cube [-1, 1]^3 is scaled to a half-extent of STUDIO_SCALE metres; its bounding
sphere (radius STUDIO_SCALE * sqrt(3)) fills the view at STUDIO_DISTANCE with STUDIO_FOV_DEG.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from difflib import get_close_matches

import numpy as np

from genfield.errors import UsageError
from genfield.field.codebook import CodeBook
from genfield.render.camera import look_at, make_camera, orbit_position
from genfield.scene import Backdrop, CodeChoice, Light, Pose, Scene, SceneObject

STUDIO_SIZE = 128  # pixels, square
STUDIO_FOV_DEG = 40.0  # horizontal field of view
STUDIO_SCALE = 0.5  # object half-extent, metres
# sin(fov / 2) * distance >= sqrt(3) * scale keeps the whole cube in view: 0.866 / sin(20 deg)
# = 2.53 m; a little more leaves a margin.
STUDIO_DISTANCE = 2.7
STUDIO_ELEVATION_DEG = 25.0
STUDIO_AZIMUTH_DEG = 30.0
STUDIO_LIGHT = Light(direction=(0.408, -0.408, 0.816), strength=0.9, ambient=0.3)
STUDIO_BACKDROP = Backdrop(top_srgb=(0.93, 0.93, 0.95), bottom_srgb=(0.78, 0.79, 0.82))


def studio_scene(shape: CodeChoice, appearance: CodeChoice, *, label: str = "object",
                 azimuth_deg: float = STUDIO_AZIMUTH_DEG,
                 elevation_deg: float = STUDIO_ELEVATION_DEG, size: int = STUDIO_SIZE,
                 index: int = 0, values: dict | None = None) -> Scene:
    """The one-object studio scene for a code pair, seen from (azimuth, elevation) in degrees."""
    position = orbit_position((0.0, 0.0, 0.0), STUDIO_DISTANCE, math.radians(elevation_deg),
                              math.radians(azimuth_deg))
    camera = make_camera(size, size, look_at(position, (0.0, 0.0, 0.0)), fov_deg=STUDIO_FOV_DEG)
    obj = SceneObject(id=1, label=label, shape=shape, appearance=appearance,
                      pose=Pose.from_ypr((0.0, 0.0, 0.0), 0.0, 0.0, 0.0, scale=STUDIO_SCALE))
    return Scene(index=index, seed=0, camera=camera, objects=(obj,), light=STUDIO_LIGHT,
                 backdrop=STUDIO_BACKDROP, values=dict(values or {}))


def _row(codebook: CodeBook, name: str, option: str) -> int:
    try:
        return codebook.index(name)
    except KeyError:
        near = get_close_matches(name, codebook.names, n=1)
        raise UsageError(
            f"{option}: the model has no code named {name!r}",
            hint=f"did you mean {near[0]!r}?" if near else "see 'genfield inspect MODEL' for the names",
        ) from None


def mixed_code(codebook: CodeBook, part: str, a: str, b: str, weight: float,
               option: str = "") -> CodeChoice:
    """Linear interpolation (1 - w) code_a + w code_b of the ``part`` ("shape"/"appearance")."""
    table = codebook.shape if part == "shape" else codebook.appearance
    va = table[_row(codebook, a, option or f"--{part}")].astype(np.float64)
    vb = table[_row(codebook, b, option or f"--{part}")].astype(np.float64)
    vector = ((1.0 - weight) * va + weight * vb).astype(np.float32)
    expression = {"kind": "mix", "names": [a, b], "weights": [1.0 - weight, weight],
                  "spherical": False}
    return CodeChoice(tuple(float(v) for v in vector), expression)


def named_code(codebook: CodeBook, part: str, name: str, option: str = "") -> CodeChoice:
    """The ``part`` code of a named asset."""
    table = codebook.shape if part == "shape" else codebook.appearance
    row = _row(codebook, name, option or f"--{part}")
    return CodeChoice(tuple(float(v) for v in table[row]), {"kind": "named", "name": name})


@dataclass(frozen=True)
class CodeRange:
    """A code fixed at one named asset (end is None) or run from ``start`` to ``end``."""

    start: str
    end: str | None = None

    @classmethod
    def parse(cls, text: str, option: str) -> CodeRange:
        """``NAME`` or ``NAME..NAME``."""
        parts = text.split("..")
        if len(parts) > 2 or not all(p.strip() for p in parts):
            raise UsageError(f"{option}: expected NAME or NAME..NAME, got {text!r}")
        return cls(parts[0].strip(), parts[1].strip() if len(parts) == 2 else None)

    def code(self, codebook: CodeBook, part: str, weight: float, option: str) -> CodeChoice:
        if self.end is None:
            return named_code(codebook, part, self.start, option)
        return mixed_code(codebook, part, self.start, self.end, weight, option)


def interpolation_weights(steps: int) -> np.ndarray:
    """``steps`` weights evenly from 0 to 1 inclusive, (steps,) float64."""
    if steps < 2:
        raise UsageError(f"--steps: an interpolation needs at least 2 steps, got {steps}")
    return np.linspace(0.0, 1.0, steps)


@dataclass(frozen=True)
class LatentPlan:
    """The scenes of a latent sweep, row-major, with the axes' names and value labels."""

    scenes: tuple[Scene, ...]
    column_title: str
    column_labels: tuple[str, ...]
    row_title: str = ""
    row_labels: tuple[str, ...] = ()


def latent_plan(codebook: CodeBook, shape: CodeRange, appearance: CodeRange,
                steps: int = 7) -> LatentPlan:
    """Scenes for a shape and/or appearance interpolation in the studio.

    One range gives a strip of ``steps`` frames; both give a grid (shape down the rows,
    appearance across the columns).
    """
    if shape.end is None and appearance.end is None:
        raise UsageError("a latent sweep needs a range: --shape A..B or --appearance A..B")
    weights = interpolation_weights(steps)
    ws = weights if shape.end is not None else np.zeros(1)
    wa = weights if appearance.end is not None else np.zeros(1)
    scenes = []
    for i, s in enumerate(ws):
        for j, a in enumerate(wa):
            scenes.append(studio_scene(
                shape.code(codebook, "shape", float(s), "--shape"),
                appearance.code(codebook, "appearance", float(a), "--appearance"),
                label=codebook.families[_row(codebook, shape.start, "--shape")],
                index=i * len(wa) + j,
                values={"shape_weight": float(s), "appearance_weight": float(a)},
            ))

    def title(part: str, r: CodeRange) -> str:
        return f"{part}: {r.start} -> {r.end} (weight)"

    labels = tuple(f"{w:.2f}" for w in weights)
    if shape.end is not None and appearance.end is not None:
        return LatentPlan(tuple(scenes), title("appearance", appearance), labels,
                          title("shape", shape), labels)
    moving = shape if shape.end is not None else appearance
    part = "shape" if shape.end is not None else "appearance"
    fixed = appearance if part == "shape" else shape
    other = "appearance" if part == "shape" else "shape"
    return LatentPlan(tuple(scenes), f"{title(part, moving)}; {other}: {fixed.start}", labels)
