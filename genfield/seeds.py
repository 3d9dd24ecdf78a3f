"""Random streams: one numpy Generator per (seed, image index, purpose), never a global RNG.

Image ``i`` of a recipe must depend only on (recipe, model, seed, i), never on how many
workers ran, in which order, or what was drawn before. Deriving every stream from a
``SeedSequence`` keyed by those numbers guarantees it; the purpose is hashed into the key so
that, for example, the camera's draws and the objects' draws never share a stream.
"""

from __future__ import annotations

import hashlib

import numpy as np


def purpose_key(purpose: str) -> int:
    """A stable 32-bit number for a purpose name (Python's ``hash`` is salted per process)."""
    return int.from_bytes(hashlib.sha256(purpose.encode("utf-8")).digest()[:4], "little")


def rng(seed: int, index: int, purpose: str, *extra: int) -> np.random.Generator:
    """The Generator for one (seed, index, purpose[, extra...]) stream.

    Args:
        seed: the run's seed (recipe or command line), a non-negative integer.
        index: the image index, or 0 where no image is involved.
        purpose: what the numbers are for, e.g. ``"camera"``, ``"objects"``, ``"train"``.
        extra: further non-negative integers, e.g. an object slot or a retry count.
    """
    if seed < 0 or index < 0 or any(e < 0 for e in extra):
        raise ValueError("seed, index and extra keys must be non-negative")
    entropy = [int(seed), int(index), purpose_key(purpose), *map(int, extra)]
    return np.random.Generator(np.random.PCG64(np.random.SeedSequence(entropy)))
