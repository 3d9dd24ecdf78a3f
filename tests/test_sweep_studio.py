"""The studio scene and latent plans: codes, interpolation weights, axes, errors (no rendering)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from genfield.errors import UsageError
from genfield.field.codebook import CodeBook
from genfield.render.camera import project
from genfield.sheets.studio import (
    STUDIO_SCALE,
    CodeRange,
    latent_plan,
    mixed_code,
    named_code,
    studio_scene,
)


def _book() -> CodeBook:
    rng = np.random.default_rng(0)
    d = 4 + 3
    return CodeBook(
        names=("cup-0", "cup-1", "nut-0"), families=("cup", "cup", "nut"),
        shape=rng.standard_normal((3, 4)).astype(np.float32),
        appearance=rng.standard_normal((3, 3)).astype(np.float32),
        prior_weights=np.ones(1), prior_means=np.zeros((1, d)), prior_chols=np.eye(d)[None],
    )


def test_studio_keeps_the_whole_object_cube_in_view():
    book = _book()
    scene = studio_scene(named_code(book, "shape", "cup-0"), named_code(book, "appearance", "cup-0"))
    corners = STUDIO_SCALE * np.array(
        [[x, y, z] for x in (-1, 1) for y in (-1, 1) for z in (-1, 1)], dtype=float)
    uvz = project(scene.camera, corners)
    assert (uvz[:, 2] > 0).all()
    assert (uvz[:, :2] > 0).all() and (uvz[:, :2] < scene.camera.width).all()
    # the camera sits at the stated azimuth: +x towards +y
    pos = scene.camera.position
    assert math.degrees(math.atan2(pos[1], pos[0])) == pytest.approx(30.0)
    assert scene.objects[0].id == 1 and len(scene.objects) == 1


def test_mixed_code_is_the_linear_interpolation():
    book = _book()
    for w in (0.0, 0.3, 1.0):
        code = mixed_code(book, "appearance", "cup-0", "nut-0", w)
        expect = (1 - w) * book.appearance[0] + w * book.appearance[2]
        assert np.allclose(code.array, expect, atol=1e-6)
        assert code.expression == {"kind": "mix", "names": ["cup-0", "nut-0"],
                                   "weights": [1 - w, w], "spherical": False}


def test_shape_strip_holds_appearance_fixed():
    book = _book()
    plan = latent_plan(book, CodeRange.parse("cup-0..nut-0", "--shape"),
                       CodeRange.parse("cup-1", "--appearance"), steps=5)
    assert len(plan.scenes) == 5 and plan.row_labels == ()
    assert plan.column_labels == ("0.00", "0.25", "0.50", "0.75", "1.00")
    assert "shape" in plan.column_title and "cup-1" in plan.column_title
    appearances = {s.objects[0].appearance.vector for s in plan.scenes}
    assert len(appearances) == 1
    shapes = [s.objects[0].shape.array for s in plan.scenes]
    assert np.allclose(shapes[0], book.shape[0]) and np.allclose(shapes[-1], book.shape[2])
    cameras = {s.camera for s in plan.scenes}
    assert len(cameras) == 1  # only the code moves


def test_two_ranges_make_a_grid():
    book = _book()
    plan = latent_plan(book, CodeRange.parse("cup-0..cup-1", "--shape"),
                       CodeRange.parse("cup-0..nut-0", "--appearance"), steps=3)
    assert len(plan.scenes) == 9 and len(plan.row_labels) == 3
    # row-major: shape weight down the rows, appearance weight across
    assert [s.values["appearance_weight"] for s in plan.scenes[:3]] == [0.0, 0.5, 1.0]
    assert [s.values["shape_weight"] for s in plan.scenes[::3]] == [0.0, 0.5, 1.0]


@pytest.mark.parametrize(
    ("shape", "appearance", "steps", "message"),
    [
        ("cup-0", "cup-1", 5, "needs a range"),
        ("cup-0..cpu-1", "cup-0", 5, "did you mean 'cup-1'"),
        ("cup-0..nut-0", "cup-0", 1, "at least 2 steps"),
    ],
)
def test_latent_plan_errors(shape, appearance, steps, message):
    with pytest.raises(UsageError) as err:
        latent_plan(_book(), CodeRange.parse(shape, "--shape"),
                    CodeRange.parse(appearance, "--appearance"), steps)
    assert message in err.value.one_line()


@pytest.mark.parametrize("text", ["a..b..c", "..b", "a..", ""])
def test_code_range_syntax(text):
    with pytest.raises(UsageError, match="NAME..NAME"):
        CodeRange.parse(text, "--shape")
