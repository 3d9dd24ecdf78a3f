"""The gallery script's pieces that need no model: recipe lines, README section, thinning."""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import numpy as np
from PIL import Image

ROOT = Path(__file__).resolve().parent.parent
_spec = importlib.util.spec_from_file_location("make_gallery", ROOT / "gallery" / "make_gallery.py")
gallery = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("make_gallery", gallery)  # dataclasses look their module up there
_spec.loader.exec_module(gallery)


def test_block_lines_are_the_recipes_own_text():
    recipe = ROOT / "recipes" / "demo-sorting-mat.gfr"
    text = recipe.read_text()
    sweep = gallery.block_lines(recipe, ("sweep",), "turntable")
    assert sweep.startswith("sweep turntable {") and sweep.endswith("}")
    assert sweep in text
    objects = gallery.block_lines(recipe, ("object",))
    assert objects.count("object ") == 4 and all(b in text for b in objects.split("\n\n"))


def test_readme_section_replaces_the_placeholder_then_itself(tmp_path):
    readme = tmp_path / "README.md"
    readme.write_text(f"# x\n\n{gallery.PLACEHOLDER}\n\n## after\n")
    pic = gallery.Picture(gallery.GALLERY / "a.png", "caption a", Path("r.gfr"), "sweep s {\n}")
    gallery.write_readme(gallery.readme_section([pic]), readme)
    once = readme.read_text()
    assert gallery.PLACEHOLDER not in once and "![a](gallery/a.png)" in once
    assert "sweep s {" in once and once.endswith("## after\n")
    gallery.write_readme(gallery.readme_section([pic]), readme)
    assert readme.read_text() == once  # regenerating is idempotent


def test_palette_png_keeps_a_sheet_close(tmp_path):
    rng = np.random.default_rng(0)
    image = np.repeat(rng.integers(0, 256, (8, 8, 3), dtype=np.uint8), 8, axis=0).repeat(8, axis=1)
    path = gallery.save_small(image, tmp_path / "s.png")
    with Image.open(path) as im:
        assert im.mode == "P"
        back = np.asarray(im.convert("RGB")).astype(int)
    assert np.abs(back - image).mean() < 6  # 64 colours fit a 256-colour palette closely
