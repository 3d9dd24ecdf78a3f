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
