"""The compositional volume renderer: cameras, poses, composition, shading, exact labels.

The public names are imported lazily, so ``genfield.render.camera`` (which the recipe
package uses) does not pull in torch.
"""

from __future__ import annotations

from genfield.lazy import lazy_getattr

# public name -> module that defines it
_PUBLIC: dict[str, str] = {
    "render_scene": "genfield.render.renderer",
    "RenderOptions": "genfield.render.options",
    "RenderOutput": "genfield.render.output",
    "GridCache": "genfield.render.cache",
    "AnalyticModel": "genfield.render.analytic",
}

__all__ = list(_PUBLIC)


__getattr__ = lazy_getattr(__name__, _PUBLIC)
