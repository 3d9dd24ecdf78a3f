"""Which blocks a recipe may hold, the settings of each, and what each setting takes.

The grammar only says how a recipe is written; this table says what it may say. The checker
reads it to type-check every value and to name the nearest known setting when one is
misspelt; DEVELOPERS.md's reference mirrors it (a test holds the two together).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field


@dataclass(frozen=True)
class Bound:
    """The values a number may take, in canonical units (metres, radians)."""

    lo: float = -math.inf
    hi: float = math.inf
    lo_open: bool = False  # lo itself is excluded
    hi_open: bool = False
    text: str = ""  # how a message states it: "> 0", "between 0 and 1"

    def holds(self, value: float) -> bool:
        above = value > self.lo if self.lo_open else value >= self.lo
        below = value < self.hi if self.hi_open else value <= self.hi
        return above and below


POSITIVE = Bound(0.0, lo_open=True, text="> 0")
NON_NEGATIVE = Bound(0.0, text=">= 0")
FRACTION = Bound(0.0, 1.0, text="between 0 and 1")
FIELD_OF_VIEW = Bound(0.0, math.pi, True, True, text="between 0deg and 180deg (both excluded)")
DETAIL = Bound(0.5, 4.0, text="between 0.5 and 4")  # genfield.render.options.RenderOptions.cells_per_pixel
ELEVATION = Bound(-math.pi / 2, math.pi / 2, True, True,
                  text="between -90deg and 90deg (both excluded)")


@dataclass(frozen=True)
class Slot:
    """What one setting takes.

    type: number, whole, vector, box, colour, text, code, asset, bool, words, dims.
    unit: the kind of number for number/vector/box slots: length, angle, pixels, plain.
    """

    type: str
    unit: str = "plain"
    sizes: tuple[int, ...] = (3,)  # vector and box lengths allowed
    words: tuple[str, ...] = ()  # for words slots
    bound: Bound | None = None
    fixed: bool = False  # must not be random
    many: bool = False  # takes a comma list
    doc: str = ""  # one line for the reference


@dataclass(frozen=True)
class BlockSchema:
    settings: dict[str, Slot]
    many: bool = False  # may appear more than once (each with its own name)
    label: str = "none"  # "required", "optional" or "none"
    doc: str = ""


# Outputs the dataset writer knows (genfield.dataset.layout.OUTPUTS, and amodal masks);
# "image" is the picture itself and is always written.
OUTPUTS = ("image", "mask", "amodal", "depth", "normals")

TOP_SETTINGS: dict[str, Slot] = {
    "model": Slot("text", fixed=True, doc="the model file, relative to this recipe's folder"),
}

BLOCKS: dict[str, BlockSchema] = {
    "dataset": BlockSchema(
        {
            "images": Slot("whole", fixed=True, bound=Bound(1, 10_000_000, text="between 1 and "
                                                                  "10000000"), doc="image count"),
            "seed": Slot("whole", fixed=True, bound=Bound(0, 2**63 - 1, text=">= 0"),
                         doc="the seed of every draw"),
            "train": Slot("number", fixed=True, bound=FRACTION, doc="fraction for training"),
            "val": Slot("number", fixed=True, bound=FRACTION, doc="fraction for validation"),
            "test": Slot("number", fixed=True, bound=FRACTION, doc="fraction for testing"),
            "outputs": Slot("words", words=OUTPUTS, many=True, doc="what to write per image"),
            "detail": Slot("number", fixed=True, bound=DETAIL,
                           doc="baked grid cells per pixel an object spans (2; 1 is faster)"),
        },
        doc="how many images, the seed, the splits and the outputs",
    ),
    "camera": BlockSchema(
        {
            "size": Slot("dims", fixed=True, doc="image width x height in pixels"),
            "fov": Slot("number", "angle", bound=FIELD_OF_VIEW, doc="horizontal field of view"),
            "focal": Slot("number", "pixels", bound=POSITIVE, doc="focal length (instead of fov)"),
            "target": Slot("vector", "length", doc="the point looked at"),
            "distance": Slot("number", "length", bound=POSITIVE, doc="orbit: distance to target"),
            "elevation": Slot("number", "angle", bound=ELEVATION, doc="orbit: angle above the floor"),
            "azimuth": Slot("number", "angle", doc="orbit: angle from +x towards +y"),
            "position": Slot("vector", "length", doc="look-at: the camera centre"),
            "up": Slot("vector", doc="the world direction that is up in the image"),
        },
        doc="a pinhole camera by orbit (distance, elevation, azimuth) or by position",
    ),
    "light": BlockSchema(
        {
            "direction": Slot("vector", doc="towards the light (normalised for you)"),
            "elevation": Slot("number", "angle", bound=Bound(-math.pi / 2, math.pi / 2,
                              text="between -90deg and 90deg"), doc="or: light's angle above"),
            "azimuth": Slot("number", "angle", doc="and its angle from +x towards +y"),
            "strength": Slot("number", bound=NON_NEGATIVE, doc="directional strength"),
            "ambient": Slot("number", bound=NON_NEGATIVE, doc="light everywhere"),
            "shadows": Slot("bool", fixed=True, doc="trace shadows (yes or no)"),
        },
        doc="one directional light and ambient light",
    ),
    "backdrop": BlockSchema(
        {
            "colour": Slot("colour", doc="one colour behind everything"),
            "top": Slot("colour", doc="gradient: colour of the top row"),
            "bottom": Slot("colour", doc="gradient: colour of the bottom row"),
            "floor": Slot("colour", doc="a floor plane at z = 0 with this colour"),
        },
        doc="what rays that miss every object see",
    ),
    "layout": BlockSchema(
        {
            "apart": Slot("bool", fixed=True, doc="keep bounding spheres apart (default yes)"),
            "gap": Slot("number", "length", bound=NON_NEGATIVE, doc="least gap between spheres"),
            "tries": Slot("whole", fixed=True, bound=Bound(1, 100_000, text="between 1 and "
                                                             "100000"), doc="placement tries"),
        },
        doc="placement rules for all objects",
    ),
    "object": BlockSchema(
        {
            "label": Slot("text", fixed=True, doc="the class label (default: the block's name)"),
            "count": Slot("whole", bound=Bound(0, 1000, text="between 0 and 1000"),
                          doc="how many (a number or a range like 2 to 5)"),
            "asset": Slot("asset", doc="both codes from one expression; CODE wearing CODE"),
            "shape": Slot("code", doc="the shape code"),
            "appearance": Slot("code", doc="the appearance code"),
            "scale": Slot("number", "length", bound=POSITIVE, doc="half the cube's edge"),
            "yaw": Slot("number", "angle", doc="turn about z"),
            "pitch": Slot("number", "angle", doc="then about y"),
            "roll": Slot("number", "angle", doc="then about x"),
            "at": Slot("vector", "length", sizes=(2, 3), doc="centre (x, y[, z])"),
            "inside": Slot("box", "length", sizes=(2, 3), doc="centre uniform in a box"),
            "on": Slot("words", words=("floor",), doc="on floor: rest on z = 0"),
        },
        many=True,
        label="required",
        doc="a kind of object; its name is the class label unless label is given",
    ),
    "sweep": BlockSchema(
        {
            "mode": Slot("words", words=("grid", "zip"), doc="two parameters: grid or zip"),
            "index": Slot("whole", fixed=True, bound=NON_NEGATIVE, doc="the scene held fixed"),
        },
        many=True,
        label="optional",
        doc="PARAM values... for one or two parameters instead of random draws",
    ),
}


@dataclass(frozen=True)
class ParamInfo:
    """One sweepable number of a recipe."""

    name: str  # e.g. "camera.azimuth", "cup.yaw", "cup.shape.w1", "spin"
    unit: str  # length, angle, pixels, plain
    bound: Bound | None = None
    whole: bool = False
    random: bool = False  # drawn (not fixed) in the recipe
    source: str = ""  # the recipe text that sets it, or "(default)"
    per_object: bool = False
    where: str = field(default="", compare=False)
