"""The concrete scene: plain data that the recipe produces and everything downstream reads.

A ``Scene`` holds numbers only (camera, light, backdrop, objects with class, codes and pose).
The renderer, the dataset writer and the mesh exporter take a Scene and never see recipe
text. It serialises to JSON and back without loss (Python floats print as the shortest
string that reads back to the same double).

Frames (see DEVELOPERS.md): world is right-handed, z up, metres; the floor is z = 0.
Objects live in the cube [-1, 1]^3 of their own frame; ``x_world = t + s R x_object``.
Cameras use OpenCV axes (x right, y down, z forward) and pixel centres at +0.5.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np

Vec3 = tuple[float, float, float]
Mat = tuple[tuple[float, ...], ...]


def rotation_from_ypr(yaw: float, pitch: float, roll: float) -> np.ndarray:
    """Rotation matrix (3, 3) for yaw about z, then pitch about y, then roll about x (radians).

    R = Rz(yaw) @ Ry(pitch) @ Rx(roll): intrinsic z-y'-x'' Tait-Bryan angles, the aerospace
    convention; scipy's ``Rotation.from_euler("ZYX", [yaw, pitch, roll])`` is the same matrix.
    """
    cy, sy = math.cos(yaw), math.sin(yaw)
    cp, sp = math.cos(pitch), math.sin(pitch)
    cr, sr = math.cos(roll), math.sin(roll)
    rz = np.array([[cy, -sy, 0.0], [sy, cy, 0.0], [0.0, 0.0, 1.0]])
    ry = np.array([[cp, 0.0, sp], [0.0, 1.0, 0.0], [-sp, 0.0, cp]])
    rx = np.array([[1.0, 0.0, 0.0], [0.0, cr, -sr], [0.0, sr, cr]])
    return rz @ ry @ rx


def _mat(a: np.ndarray) -> Mat:
    return tuple(tuple(float(v) for v in row) for row in np.asarray(a))


@dataclass(frozen=True)
class Camera:
    """A pinhole camera: intrinsics in pixels and the world-to-camera transform (OpenCV axes)."""

    width: int  # image width in pixels
    height: int  # image height in pixels
    fx: float  # focal length in pixels along x
    fy: float  # focal length in pixels along y
    cx: float  # principal point x in pixels (width / 2 for a centred camera)
    cy: float  # principal point y in pixels
    world_to_camera: Mat  # 4x4 rigid transform, rows of floats

    @property
    def K(self) -> np.ndarray:  # noqa: N802 (the trade's name)
        """The 3x3 intrinsic matrix."""
        return np.array([[self.fx, 0.0, self.cx], [0.0, self.fy, self.cy], [0.0, 0.0, 1.0]])

    @property
    def w2c(self) -> np.ndarray:
        """World-to-camera 4x4 as an array."""
        return np.array(self.world_to_camera, dtype=np.float64)

    @property
    def c2w(self) -> np.ndarray:
        """Camera-to-world 4x4 as an array."""
        return np.linalg.inv(self.w2c)

    @property
    def position(self) -> np.ndarray:
        """Camera centre in world coordinates, (3,)."""
        return self.c2w[:3, 3]


@dataclass(frozen=True)
class Pose:
    """Uniform scale, rotation and translation: ``x_world = t + s R x_object``."""

    translation: Vec3  # metres, world frame
    rotation: Mat  # 3x3 rotation matrix
    scale: float  # half-extent of the object cube in metres (> 0)
    yaw_pitch_roll: Vec3 = (0.0, 0.0, 0.0)  # radians, as drawn; R = rotation_from_ypr(*these)

    @classmethod
    def from_ypr(cls, translation: Vec3, yaw: float, pitch: float, roll: float, scale: float) -> Pose:
        return cls(
            translation=tuple(float(v) for v in translation),  # type: ignore[arg-type]
            rotation=_mat(rotation_from_ypr(yaw, pitch, roll)),
            scale=float(scale),
            yaw_pitch_roll=(float(yaw), float(pitch), float(roll)),
        )

    @property
    def R(self) -> np.ndarray:  # noqa: N802
        return np.array(self.rotation, dtype=np.float64)

    @property
    def t(self) -> np.ndarray:
        return np.array(self.translation, dtype=np.float64)

    def object_to_world(self) -> np.ndarray:
        """The 4x4 similarity transform taking object coordinates to world coordinates."""
        m = np.eye(4)
        m[:3, :3] = self.scale * self.R
        m[:3, 3] = self.t
        return m

    def world_to_object(self) -> np.ndarray:
        """The inverse 4x4: ``x_object = R^T (x_world - t) / s``."""
        m = np.eye(4)
        m[:3, :3] = self.R.T / self.scale
        m[:3, 3] = -(self.R.T @ self.t) / self.scale
        return m


@dataclass(frozen=True)
class CodeChoice:
    """A resolved latent code and the expression that made it (kept for the factors file).

    ``expression`` is JSON-able, e.g. ``{"kind": "named", "name": "cup-0003"}``,
    ``{"kind": "prior", "temperature": 0.8}``,
    ``{"kind": "mix", "names": ["a", "b"], "weights": [0.3, 0.7], "spherical": false}``.
    """

    vector: tuple[float, ...]
    expression: dict[str, Any] = field(default_factory=dict)

    @property
    def array(self) -> np.ndarray:
        return np.array(self.vector, dtype=np.float32)


@dataclass(frozen=True)
class SceneObject:
    """One placed object."""

    id: int  # instance id, 1-based; 0 is the background in masks
    label: str  # class label, what annotations call it
    shape: CodeChoice
    appearance: CodeChoice
    pose: Pose


@dataclass(frozen=True)
class Light:
    """A directional light plus ambient; Lambert shading."""

    direction: Vec3 = (0.3, -0.4, 0.866)  # unit vector from the scene towards the light, world
    strength: float = 1.0  # multiplies max(0, n . l)
    ambient: float = 0.25  # added everywhere lit or not
    shadows: bool = False  # trace shadow rays (objects onto objects and the floor)


@dataclass(frozen=True)
class Backdrop:
    """What rays that hit no object see: a vertical gradient (equal ends = solid) and a floor."""

    top_srgb: Vec3 = (0.85, 0.87, 0.9)  # colour at the top image row, sRGB in [0, 1]
    bottom_srgb: Vec3 = (0.85, 0.87, 0.9)  # colour at the bottom image row
    floor: bool = False  # an infinite plane at z = 0
    floor_srgb: Vec3 = (0.6, 0.6, 0.6)  # its albedo, sRGB in [0, 1]


@dataclass(frozen=True)
class Scene:
    """Concrete scene ``index`` drawn from a recipe with ``seed``."""

    index: int
    seed: int
    camera: Camera
    objects: tuple[SceneObject, ...]
    light: Light = Light()
    backdrop: Backdrop = Backdrop()
    values: dict[str, Any] = field(default_factory=dict)  # swept/named values, for the factors

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), sort_keys=True)

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> Scene:
        def tup(x: Any) -> Any:
            return tuple(tup(v) for v in x) if isinstance(x, list) else x

        cam = d["camera"]
        camera = Camera(**{k: (tup(v) if k == "world_to_camera" else v) for k, v in cam.items()})
        objects = tuple(
            SceneObject(
                id=o["id"],
                label=o["label"],
                shape=CodeChoice(tuple(o["shape"]["vector"]), o["shape"]["expression"]),
                appearance=CodeChoice(tuple(o["appearance"]["vector"]), o["appearance"]["expression"]),
                pose=Pose(**{k: tup(v) for k, v in o["pose"].items()}),
            )
            for o in d["objects"]
        )
        return cls(
            index=d["index"],
            seed=d["seed"],
            camera=camera,
            objects=objects,
            light=Light(**{k: tup(v) for k, v in d["light"].items()}),
            backdrop=Backdrop(**{k: tup(v) for k, v in d["backdrop"].items()}),
            values=d.get("values", {}),
        )

    @classmethod
    def from_json(cls, text: str) -> Scene:
        return cls.from_dict(json.loads(text))
