"""The dataset folder: where each file lives, how it is named, and which split an index is in.

One image ``i`` owns ``images/i.png``, ``masks/i.png``, ``depth/i.png``, ``normals/i.png``
(those the recipe asks for) and ``records/i.json``, its label record. The record is written
last, after its files are in place, and holds their sha256: it is the commit mark that
``--resume`` and ``genfield merge`` trust. ``annotations.json``, ``factors.jsonl`` and
``manifest.json`` are assembled from the records when every image is done.
"""

from __future__ import annotations

from pathlib import Path

# output name -> folder; the order is the order files are written and listed
FOLDERS: dict[str, str] = {"image": "images", "mask": "masks", "depth": "depth", "normals": "normals"}
OUTPUTS = tuple(FOLDERS)
RECORDS = "records"
ANNOTATIONS = "annotations.json"
FACTORS = "factors.jsonl"
MANIFEST = "manifest.json"
TEMP_SUFFIX = ".partial"  # temp files are ".<name>.<pid>.partial" beside their target

# Depth PNGs hold z-depth in millimetres as uint16; 0 means nothing was hit, and depths past
# the largest code saturate there (the manifest says so).
DEPTH_METRES_PER_UNIT = 0.001
DEPTH_NOTHING = 0
DEPTH_MAX_UNITS = 65535

SPLIT_NAMES = ("train", "val", "test")
# Knuth's multiplicative hashing constant, round(2^32 / golden ratio) (TAOCP vol. 3, 6.4):
# u_i = frac(i / phi) is a Weyl sequence, equidistributed in [0, 1), so every prefix of the
# indices meets the split fractions closely and image i's split never depends on --count.
_GOLDEN_32 = 2654435769


def index_width(count: int) -> int:
    """Digits in a file name: six, or more for datasets past a million images."""
    return max(6, len(str(max(count - 1, 0))))


def stem(index: int, count: int) -> str:
    """The zero-padded file stem of image ``index``, e.g. ``000042``."""
    return f"{index:0{index_width(count)}d}"


def image_file(output: str, index: int, count: int) -> str:
    """Relative path of one output of one image, e.g. ``masks/000042.png``."""
    return f"{FOLDERS[output]}/{stem(index, count)}.png"


def record_file(index: int, count: int) -> str:
    """Relative path of image ``index``'s label record."""
    return f"{RECORDS}/{stem(index, count)}.json"


def split_position(index: int) -> float:
    """Where index i falls in [0, 1): frac(i / phi), computed exactly in integers."""
    return ((index * _GOLDEN_32) % (1 << 32)) / float(1 << 32)


def split_of(index: int, fractions: tuple[tuple[str, float], ...]) -> str:
    """The split of image ``index`` for ((name, fraction), ...) whose fractions sum to 1."""
    u = split_position(index)
    edge = 0.0
    for name, fraction in fractions:
        edge += fraction
        if u < edge:
            return name
    return fractions[-1][0]  # u within rounding of 1.0


def shard_indices(count: int, shard: tuple[int, int] | None) -> range:
    """The indices a shard (i, n) renders: every n-th, starting at i (0-based)."""
    if shard is None:
        return range(count)
    i, n = shard
    return range(i, count, n)


def own_entries() -> set[str]:
    """Top-level names genfield writes in a dataset folder (what ``--force`` may remove)."""
    return {*FOLDERS.values(), RECORDS, ANNOTATIONS, FACTORS, MANIFEST}


def is_temp(path: Path) -> bool:
    """True for a temp file left by an interrupted write."""
    return path.name.startswith(".") and path.name.endswith(TEMP_SUFFIX)
