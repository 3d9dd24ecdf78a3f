"""Strips, grids and contact sheets: sizes, where tiles and labels go, that labels are drawn."""

from __future__ import annotations

import numpy as np
import pytest
from PIL import Image

from genfield.sheets.layout import (
    BACKGROUND,
    GAP,
    PAD,
    contact_sheet,
    fit_text,
    grid_sheet,
    save_png,
)


def _tile(h: int, w: int, value: int) -> np.ndarray:
    rng = np.random.default_rng(value)
    return rng.integers(0, 256, size=(h, w, 3), dtype=np.uint8)


def _inked(image: np.ndarray, box) -> bool:
    x0, y0, x1, y1 = box
    crop = image[y0:y1, x0:x1].reshape(-1, 3)
    return bool((crop != np.array(BACKGROUND, dtype=np.uint8)).any(axis=1).any())


def test_grid_places_every_tile_exactly_and_labels_beside_their_axis():
    tiles = [[_tile(30, 40, 10 * r + c) for c in range(3)] for r in range(2)]
    sheet = grid_sheet(tiles, column_labels=["0", "45", "90"], row_labels=["0.25", "1.5"],
                       column_title="camera.azimuth", row_title="light.strength", title="sweep")
    assert sheet.image.dtype == np.uint8 and sheet.image.ndim == 3
    assert len(sheet.tiles) == 6
    for k, (x0, y0, x1, y1) in enumerate(sheet.tiles):
        r, c = divmod(k, 3)
        assert (x1 - x0, y1 - y0) == (40, 30)
        assert np.array_equal(sheet.image[y0:y1, x0:x1], tiles[r][c])
    # the grid is tight: tiles GAP apart, PAD to the right and bottom edges
    assert sheet.tiles[1][0] - sheet.tiles[0][2] == GAP
    assert sheet.tiles[3][1] - sheet.tiles[0][3] == GAP
    h, w = sheet.image.shape[:2]
    assert h == sheet.tiles[-1][3] + PAD and w == sheet.tiles[-1][2] + PAD

    columns = sheet.marks_of("column")
    assert [m.text for m in columns] == ["0", "45", "90"]
    for m, (x0, y0, x1, _) in zip(columns, sheet.tiles[:3], strict=True):
        mid = (m.box[0] + m.box[2]) / 2
        assert x0 <= mid <= x1 and m.box[3] <= y0
    rows = sheet.marks_of("row")
    assert [m.text for m in rows] == ["0.25", "1.5"]
    for m, tile in zip(rows, (sheet.tiles[0], sheet.tiles[3]), strict=True):
        mid = (m.box[1] + m.box[3]) / 2
        assert tile[1] <= mid <= tile[3] and m.box[2] <= tile[0]
    assert [m.text for m in sheet.marks_of("column-title")] == ["camera.azimuth"]
    assert [m.text for m in sheet.marks_of("row-title")] == ["light.strength"]
    row_title = sheet.marks_of("row-title")[0].box
    assert row_title[3] - row_title[1] > row_title[2] - row_title[0]  # drawn upright
    for m in sheet.marks:
        assert _inked(sheet.image, m.box), m
    assert columns[2].box[2] - columns[2].box[0] > columns[0].box[2] - columns[0].box[0]  # "90" vs "0"


def test_nothing_is_drawn_outside_tiles_and_labels():
    tiles = [[np.zeros((20, 20, 3), np.uint8) for _ in range(4)]]
    sheet = grid_sheet(tiles, column_labels=["a", "b", "c", "d"], column_title="weight")
    mask = np.zeros(sheet.image.shape[:2], bool)
    for x0, y0, x1, y1 in list(sheet.tiles) + [m.box for m in sheet.marks]:
        mask[y0:y1, x0:x1] = True
    outside = sheet.image[~mask]
    assert (outside == np.array(BACKGROUND, np.uint8)).all()


def test_strip_has_no_row_margin():
    sheet = grid_sheet([[_tile(16, 16, i) for i in range(5)]], column_labels=list("abcde"))
    assert sheet.tiles[0][0] == PAD
    assert not sheet.marks_of("row")


def test_long_labels_are_shortened_to_their_column():
    sheet = grid_sheet([[_tile(24, 24, 1), _tile(24, 24, 2)]],
                       column_labels=["a very long parameter value indeed", "x"])
    first = sheet.marks_of("column")[0]
    assert first.text.endswith("...")
    assert first.box[2] - first.box[0] <= 24
    assert fit_text("short", 500) == "short"


@pytest.mark.parametrize(
    "kwargs",
    [dict(column_labels=["a"]), dict(row_labels=["a", "b", "c"])],
)
def test_label_counts_must_match(kwargs):
    with pytest.raises(ValueError, match="labels"):
        grid_sheet([[_tile(8, 8, 0), _tile(8, 8, 1)], [_tile(8, 8, 2), _tile(8, 8, 3)]], **kwargs)


def test_grid_refuses_ragged_or_mixed_tiles():
    with pytest.raises(ValueError):
        grid_sheet([[_tile(8, 8, 0)], [_tile(8, 8, 1), _tile(8, 8, 2)]])
    with pytest.raises(ValueError):
        grid_sheet([[_tile(8, 8, 0), _tile(9, 8, 1)]])
    with pytest.raises(ValueError):
        grid_sheet([[np.zeros((8, 8), np.uint8)]])


def test_contact_sheet_rows_and_captions():
    tiles = [_tile(20, 30, i) for i in range(5)]
    captions = [f"#{i}" for i in range(5)]
    sheet = contact_sheet(tiles, captions, columns=2, title="preview")
    assert len(sheet.tiles) == 5
    ys = sorted({b[1] for b in sheet.tiles})
    assert len(ys) == 3  # 5 tiles at 2 a row
    for tile, box, mark in zip(tiles, sheet.tiles, sheet.marks_of("caption"), strict=True):
        x0, y0, x1, y1 = box
        assert np.array_equal(sheet.image[y0:y1, x0:x1], tile)
        assert mark.box[1] >= y1 and x0 <= mark.box[0] < x1
        assert _inked(sheet.image, mark.box)
    assert [m.text for m in sheet.marks_of("caption")] == captions


def test_contact_sheet_centres_smaller_tiles():
    sheet = contact_sheet([_tile(20, 20, 0), _tile(10, 10, 1)], ["a", "b"], columns=2)
    (a0, a1, _, _), (b0, b1, b2, b3) = sheet.tiles
    assert (b2 - b0, b3 - b1) == (10, 10)
    assert b1 - a1 == 5  # centred in a 20-pixel cell


def test_save_png_round_trips(tmp_path):
    sheet = grid_sheet([[_tile(12, 12, 3)]], column_labels=["1"])
    path = sheet.save(tmp_path / "sub" / "s.png")
    back = np.asarray(Image.open(path))
    assert np.array_equal(back, sheet.image)
    assert [p.name for p in path.parent.iterdir()] == ["s.png"]  # no temporary left behind
    save_png(np.zeros((4, 4), np.uint8), tmp_path / "grey.png")
