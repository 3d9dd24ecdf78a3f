"""The code sheet of ``genfield inspect --sheet``: every named code, rendered and captioned."""

from __future__ import annotations

import numpy as np
import torch

from genfield.sheets.make import code_scenes, code_sheet
from tests._sheet_doubles import BlendModel

torch.set_num_threads(1)


def test_every_named_code_is_one_captioned_tile():
    model = BlendModel()
    sheet = code_sheet(model, size=48, columns=3, title="analytic")
    names = list(model.codebook.names)
    assert [m.text for m in sheet.marks_of("caption")] == names
    assert len(sheet.tiles) == len(names)
    assert len({b[1] for b in sheet.tiles}) == 2  # 5 codes at 3 a row
    colours = []
    for name, (x0, y0, x1, y1) in zip(names, sheet.tiles, strict=True):
        tile = sheet.image[y0:y1, x0:x1].astype(float)
        assert tile.shape[:2] == (48, 48)
        centre = tile[18:30, 18:30].reshape(-1, 3).mean(axis=0)
        colours.append(centre)
        # the tile shows that code's own colour at its centre (hue order of the channels)
        expect = model.colour(name)
        assert np.argmax(centre) == np.argmax(expect), name
    assert len({tuple(np.round(c)) for c in colours}) == len(names)


def test_code_scenes_pair_each_shape_with_its_own_appearance():
    model = BlendModel()
    scenes = code_scenes(model.codebook, size=32)
    for i, scene in enumerate(scenes):
        (obj,) = scene.objects
        assert obj.shape.expression == {"kind": "named", "name": model.codebook.names[i]}
        assert np.array_equal(obj.appearance.array, model.codebook.appearance[i])
