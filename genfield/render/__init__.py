"""The compositional volume renderer: cameras, poses, composition, shading, exact labels.

The public names are imported lazily, so ``genfield.render.camera`` (which the recipe
package uses) does not pull in torch.
"""

from __future__ import annotations

import importlib
from typing import Any

# public name -> module that defines it
_PUBLIC: dict[str, str] = {
    "render_scene": "genfield.render.renderer",
    "RenderOptions": "genfield.render.options",
    "RenderOutput": "genfield.render.output",
    "GridCache": "genfield.render.cache",
    "AnalyticModel": "genfield.render.analytic",
}

__all__ = list(_PUBLIC)


def __getattr__(name: str) -> Any:
    if name in _PUBLIC:
        return getattr(importlib.import_module(_PUBLIC[name]), name)
    raise AttributeError(f"module 'genfield.render' has no attribute {name!r}")
