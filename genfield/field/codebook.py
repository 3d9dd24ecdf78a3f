"""The code table and prior of a model, readable without torch.

The recipe language resolves code expressions (a named code, a prior draw, an
interpolation) into vectors while drawing a concrete scene; parsing, checking and drawing
must not import torch, so this module is numpy only. The model file stores these arrays in
its safetensors weights and the names in its JSON metadata (see ``genfield.field.modelfile``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class CodeBook:
    """Named codes and a Gaussian-mixture prior over the joint (shape, appearance) code.

    names: (n,) asset names, unique; families: (n,) family of each (or "mesh").
    shape: (n, Ds) float32; appearance: (n, Da) float32.
    prior_weights: (C,) mixture weights summing to 1 (C = 1 for a single Gaussian).
    prior_means: (C, Ds + Da); prior_chols: (C, Ds + Da, Ds + Da) lower Cholesky factors.
    """

    names: tuple[str, ...]
    families: tuple[str, ...]
    shape: np.ndarray
    appearance: np.ndarray
    prior_weights: np.ndarray
    prior_means: np.ndarray
    prior_chols: np.ndarray

    @property
    def shape_dim(self) -> int:
        return int(self.shape.shape[1])

    @property
    def appearance_dim(self) -> int:
        return int(self.appearance.shape[1])

    def index(self, name: str) -> int:
        """Row of a named code; raises KeyError with the name if unknown."""
        try:
            return self.names.index(name)
        except ValueError:
            raise KeyError(name) from None

    def sample_prior(self, rng: np.random.Generator, temperature: float = 1.0,
                     component: int | None = None) -> tuple[np.ndarray, np.ndarray]:
        """One draw (shape (Ds,), appearance (Da,)) from the prior, spread scaled by temperature.

        A mixture component is chosen by its weight unless ``component`` is given.
        """
        if temperature < 0:
            raise ValueError(f"temperature must be >= 0, got {temperature}")
        c = int(rng.choice(len(self.prior_weights), p=self.prior_weights)) if component is None else component
        z = rng.standard_normal(self.prior_means.shape[1])
        joint = self.prior_means[c] + temperature * (self.prior_chols[c] @ z)
        joint = joint.astype(np.float32)
        return joint[: self.shape_dim], joint[self.shape_dim :]


def codebook_tensors(book: CodeBook) -> dict[str, np.ndarray]:
    """The code table and prior as named float32 arrays, as the model file stores them."""
    return {
        "codes.shape": np.asarray(book.shape, dtype=np.float32),
        "codes.appearance": np.asarray(book.appearance, dtype=np.float32),
        "prior.weights": np.asarray(book.prior_weights, dtype=np.float64),
        "prior.means": np.asarray(book.prior_means, dtype=np.float64),
        "prior.chols": np.asarray(book.prior_chols, dtype=np.float64),
    }


def codebook_from_contents(tensors: dict[str, np.ndarray], names: list, families: list,
                           where: str) -> CodeBook:
    """Rebuild a CodeBook from a model file's arrays and lists, checking that they agree."""
    from genfield.errors import ModelFileError

    try:
        shape, appearance = tensors["codes.shape"], tensors["codes.appearance"]
        weights, means, chols = (tensors["prior.weights"], tensors["prior.means"],
                                 tensors["prior.chols"])
    except KeyError as err:
        raise ModelFileError(f"the code table lacks the array {err.args[0]!r}", where=where) from None
    bad = ModelFileError("the code table and prior arrays do not fit together", where=where)
    if shape.ndim != 2 or appearance.ndim != 2 or weights.ndim != 1:
        raise bad
    n, c = len(names), weights.shape[0]
    d = shape.shape[1] + appearance.shape[1]
    if (c < 1 or shape.shape[0] != n or appearance.shape[0] != n or len(families) != n
            or len(set(names)) != n or means.shape != (c, d) or chols.shape != (c, d, d)
            or not np.isclose(weights.sum(), 1.0)):
        raise bad
    return CodeBook(names=tuple(str(x) for x in names), families=tuple(str(x) for x in families),
                    shape=shape.astype(np.float32), appearance=appearance.astype(np.float32),
                    prior_weights=weights, prior_means=means, prior_chols=chols)


def read_codebook(path) -> CodeBook:
    """The code table and prior of a model file, read without torch (numpy + safetensors)."""
    from genfield.field.modelfile import read_model_file

    contents = read_model_file(path)
    return codebook_from_contents(contents.tensors, contents.meta["names"],
                                  contents.meta["families"], str(path))
