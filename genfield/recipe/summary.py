"""The short summary ``genfield check`` prints: classes, counts, what is random, outputs."""

from __future__ import annotations

from genfield.recipe.spec import Recipe
from genfield.recipe.values import is_continuous, is_random, show


def kind_of(recipe: Recipe, name: str) -> str:
    return next(c.kind for c in recipe.constants if c.name == name)


def _box(lo: tuple[float, ...], hi: tuple[float, ...]) -> str:
    def corner(c: tuple[float, ...]) -> str:
        return "(" + ", ".join(show(x, "length") for x in c) + ")"

    return f"{corner(lo)}..{corner(hi)}"


def describe(recipe: Recipe, model_note: str = "") -> str:
    """A few lines a person reads to see what the recipe will make."""
    d = recipe.dataset
    lines = [f"recipe {recipe.path}" + (f" (+{len(recipe.files) - 1} included)"
                                         if len(recipe.files) > 1 else "")]
    model = str(recipe.model_path) if recipe.model_path else "(none named; give --model)"
    lines.append(f"model: {model}" + (f" ({model_note})" if model_note else ""))
    splits = " / ".join(f"{k} {x:g}" for k, x in d.splits.items())
    lines.append(f"dataset: {d.count} images, seed {d.seed}; {splits}; "
                 f"outputs {', '.join(sorted(d.outputs))}; detail {d.detail:g}")
    lines.append(f"classes ({len(recipe.classes)}): {', '.join(recipe.classes) or '(none)'}")
    for obj in recipe.objects:
        count = recipe.params[f"{obj.name}.count"].source
        where = "on the floor" if obj.on_floor else "free"
        if obj.inside is not None:
            where += f", inside {_box(*obj.inside)}"
        codes = "; ".join(f"{k} {text}" for k, text in obj.code_text)
        lines.append(f"  object {obj.name} (class {obj.label}): count {count}, {where}; {codes}")
    cam = recipe.camera
    how = "orbit" if cam.orbit else "look-at"
    lens = "focal" if cam.fov is None else "fov"
    lens_text = recipe.params[f"camera.{lens}"].source
    lines.append(f"camera: {how}, {cam.width}x{cam.height}, {lens} {lens_text}")
    random_constants: set[str] = set()
    drawn: list[tuple[bool, str]] = []  # constants that are not numbers: texts, colours, boxes
    for c in recipe.constants:
        if is_random(c.value, random_constants) and c.kind != "box":  # a box is a region
            random_constants.add(c.name)
            if c.name not in recipe.params and not any(
                    p.startswith(c.name + ".") for p in recipe.params):
                drawn.append((c.per_object, c.name))
    per_image = [f"{p.name} = {p.source}" for p in recipe.params.values()
                 if p.random and not p.per_object]
    per_image += [f"{name} (a {kind_of(recipe, name)})" for per_obj, name in drawn if not per_obj]
    per_object = [f"{p.name} = {p.source}" for p in recipe.params.values()
                  if p.random and p.per_object]
    per_object += [f"{name} (a {kind_of(recipe, name)})" for per_obj, name in drawn if per_obj]
    # a code varies per object when it draws on its own or reads a per-object constant
    own = {c.name for c in recipe.constants if c.per_object and c.name in random_constants}
    per_object_codes = []
    for o in recipe.objects:
        nodes = {"asset": [o.joint] if o.joint is not None else [o.shape, o.appearance],
                 "shape": [o.shape], "appearance": [o.appearance]}
        per_object_codes += [f"{o.name}.{k} = {t}" for k, t in o.code_text
                             if any(is_random(n, own) for n in nodes[k])]
    lines.append("random per image: " + ("; ".join(per_image) or "nothing"))
    lines.append("random per object: " + ("; ".join(per_object + per_object_codes) or "nothing"))
    shapes, colours = _codes_drawn_afresh(recipe)
    if shapes or colours:
        parts = [f"the shapes of {', '.join(shapes)}"] * bool(shapes)
        parts += [f"the appearances of {', '.join(colours)} (on their known shapes: colour only)"] * bool(colours)
        lines.append(f"baked afresh for every object of every image, never cached: {'; '.join(parts)}"
                     + (". At detail 2 a new shape costs several cached images' renders; detail 1 "
                        "bakes about 4x faster, thin walls rougher" if shapes else ""))
    for s in recipe.sweeps:
        parts = ", ".join(f"{name} ({len(vals)} values)" for name, vals in s.params)
        shape = "zipped" if s.zipped else ("grid" if len(s.params) == 2 else "strip")
        lines.append(f"sweep {s.name}: {parts}, {shape}, scene {s.index}")
    lines.append(f"parameters: {len(recipe.params)} (see 'genfield sweep --vary NAME=VALUES')")
    return "\n".join(lines)


def _codes_drawn_afresh(recipe: Recipe) -> tuple[list[str], list[str]]:
    """The objects whose shape is new in each draw, and those whose appearance alone is
    (``values.is_continuous``)."""
    continuous: set[str] = set()
    for c in recipe.constants:  # in order: a constant reads only those before it
        if is_continuous(c.value, continuous):
            continuous.add(c.name)

    def afresh(node) -> bool:
        return node is not None and is_continuous(node, continuous)

    shapes, colours = [], []
    for o in recipe.objects:
        if afresh(o.joint if o.joint is not None else o.shape):
            shapes.append(o.name)
        elif o.joint is None and afresh(o.appearance):
            colours.append(o.name)
    return shapes, colours
