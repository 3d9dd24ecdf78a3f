"""The grid cache: memory LRU by bytes, disk for repeated codes of models with an identity."""

from __future__ import annotations

import logging

import numpy as np
import pytest

from genfield.field.grid import FieldGrid
from genfield.render.analytic import AnalyticModel, demo_shapes
from genfield.render.cache import GridCache, code_key


class Counting:
    """An AnalyticModel that counts its bakes."""

    def __init__(self, identity: str | None = None) -> None:
        self.inner = AnalyticModel(demo_shapes())
        self.bakes = 0
        if identity is not None:
            self.identity = identity

    def bake(self, shape, appearance, resolution):
        self.bakes += 1
        return self.inner.bake(shape, appearance, resolution)

    def codes(self, i):
        return self.inner.shape_code(i), self.inner.appearance_code(i)


def test_memory_hits_do_not_bake_again():
    model, cache = Counting(), GridCache(1 << 28, disk=False)
    a = cache.get(model, *model.codes(0), 17)
    b = cache.get(model, *model.codes(0), 17)
    assert a is b and model.bakes == 1 and cache.stats.memory_hits == 1
    cache.get(model, *model.codes(0), 33)  # another resolution is another grid
    cache.get(model, *model.codes(1), 17)  # another code too
    assert model.bakes == 3


def test_key_is_the_exact_code_bytes():
    s, a = np.ones(4, np.float32), np.zeros(3, np.float32)
    assert code_key(s, a, 17) == code_key(s.astype(np.float64), a, 17)
    nudged = s.copy()
    nudged[2] = np.nextafter(np.float32(1.0), np.float32(2.0))
    assert code_key(nudged, a, 17) != code_key(s, a, 17)
    # the split between shape and appearance is part of the key
    assert code_key(np.ones(3), np.ones(4), 17) != code_key(np.ones(4), np.ones(3), 17)


def test_memory_is_bounded_by_bytes_oldest_first():
    model = Counting()
    one = GridCache(1 << 28, disk=False).get(model, *model.codes(0), 17).nbytes
    cache = GridCache(int(2.5 * one), disk=False)
    model.bakes = 0
    for i in range(3):
        cache.get(model, *model.codes(i), 17)
    assert model.bakes == 3
    cache.get(model, *model.codes(2), 17)
    cache.get(model, *model.codes(1), 17)
    assert model.bakes == 3  # the two newest are held
    cache.get(model, *model.codes(0), 17)
    assert model.bakes == 4  # the oldest went first


def test_a_new_model_at_an_old_address_never_hits():
    cache = GridCache(1 << 28, disk=False)
    first = Counting()
    cache.get(first, *first.codes(0), 17)
    codes = first.codes(0)
    del first
    second = Counting()
    cache.get(second, *codes, 17)
    assert second.bakes == 1


def test_disk_keeps_repeated_codes_of_models_with_identity(tmp_path):
    model = Counting(identity="test-model-1")
    cache = GridCache(1 << 28, disk=True, folder=tmp_path)
    grid = cache.get(model, *model.codes(0), 17)
    assert not list(tmp_path.glob("*.npz"))  # a code seen once stays off the disk
    cache.get(model, *model.codes(0), 17)
    files = list(tmp_path.glob("*.npz"))
    assert len(files) == 1 and cache.stats.disk_writes == 1
    with np.load(files[0], allow_pickle=False) as data:
        assert set(data.files) == {"density", "albedo"}
    # a fresh process (a new cache) reads it back without baking
    again = GridCache(1 << 28, disk=True, folder=tmp_path)
    loaded = again.get(model, *model.codes(0), 17)
    assert model.bakes == 1 and again.stats.disk_hits == 1
    assert np.array_equal(loaded.density.numpy(), grid.density.numpy())
    assert np.array_equal(loaded.features.numpy(), grid.features.numpy())
    assert np.array_equal(loaded.fine, grid.fine) and np.array_equal(loaded.coarse, grid.coarse)
    # another identity does not see it
    other = Counting(identity="test-model-2")
    GridCache(1 << 28, disk=True, folder=tmp_path).get(other, *other.codes(0), 17)
    assert other.bakes == 1


def test_models_without_identity_never_touch_the_disk(tmp_path):
    model = Counting()
    cache = GridCache(1 << 28, disk=True, folder=tmp_path)
    for _ in range(3):
        cache.get(model, *model.codes(0), 17)
    assert not list(tmp_path.iterdir())


def test_unreadable_cache_file_is_baked_again(tmp_path, caplog):
    model = Counting(identity="test-model-3")
    cache = GridCache(1 << 28, disk=True, folder=tmp_path)
    cache.get(model, *model.codes(0), 17)
    cache.get(model, *model.codes(0), 17)
    (path,) = tmp_path.glob("*.npz")
    path.write_bytes(b"not a zip file")
    with caplog.at_level(logging.WARNING):
        GridCache(1 << 28, disk=True, folder=tmp_path).get(model, *model.codes(0), 17)
    assert model.bakes == 2 and "baking it again" in caplog.text


def test_disk_is_kept_under_its_bound(tmp_path):
    model = Counting(identity="test-model-4")
    cache = GridCache(1 << 28, disk=True, folder=tmp_path, disk_bytes=0)
    cache.get(model, *model.codes(0), 17)
    cache.get(model, *model.codes(0), 17)
    assert cache.stats.disk_writes == 1 and not list(tmp_path.glob("*.npz"))


class Wrong:
    def __init__(self, grid):
        self.grid = grid

    def bake(self, shape, appearance, resolution):
        return self.grid


def test_a_bake_of_the_wrong_kind_is_refused():
    cache = GridCache(1 << 28, disk=False)
    with pytest.raises(TypeError, match="FieldGrid"):
        cache.get(Wrong(np.zeros((17, 17, 17))), np.ones(2), np.ones(2), 17)
    grid = FieldGrid(np.zeros((9, 9, 9), np.float32), np.zeros((9, 9, 9, 3), np.float32))
    with pytest.raises(ValueError, match="17"):
        cache.get(Wrong(grid), np.ones(2), np.ones(2), 17)
    bad = FieldGrid(np.full((17, 17, 17), np.nan, np.float32), np.zeros((17, 17, 17, 3), np.float32))
    with pytest.raises(ValueError, match="NaN"):
        cache.get(Wrong(bad), np.ones(2), np.ones(2), 17)
