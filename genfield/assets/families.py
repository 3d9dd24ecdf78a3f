"""The built-in procedural part families: analytic shapes with random parameters, and paint.

Two scenarios. Workshop hardware: ``washer``, ``hex_nut``, ``l_bracket``, ``bushing``. Kitchen
ware made as surfaces of revolution: ``cup`` (with a handle), ``bowl`` (with a foot ring),
``bottle``. Each family is built in millimetres from parameters drawn uniformly from the
documented ranges, then normalised into the object cube (``genfield.assets.asset.FIT``).

Randomness: asset ``index`` of ``seed`` draws from ``genfield.seeds.rng(seed, index,
"builtin:<family>")``, parameters in table order and then the paint, so an asset never depends
on how many others were made. Names: ``<family>-<index:04d>`` for seed 0, and
``<family>-<index:04d>-s<seed>`` otherwise, so a name is unique per (family, index, seed).
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from genfield.assets import sdf
from genfield.assets.asset import FIT, AnalyticGeometry, Asset
from genfield.assets.paint import Palette, draw_paint
from genfield.errors import SourceError
from genfield.seeds import rng

FAMILY_VERSION = 1  # bump when any family's geometry or paint changes: it keys the caches


@dataclass(frozen=True)
class Parameter:
    """One drawn number: uniform in [low, high]."""

    name: str
    low: float
    high: float
    unit: str  # "mm", or "ratio" (of another parameter, named in the description)
    description: str


@dataclass(frozen=True)
class Family:
    name: str
    scenario: str  # "workshop" or "kitchen"
    description: str
    parameters: tuple[Parameter, ...]
    build: Callable[[dict[str, float]], sdf.Node] = field(repr=False, compare=False)  # mm


PALETTES = {
    "workshop": Palette(saturation=(0.0, 0.45), value=(0.35, 0.9)),  # metals, oxides, paint
    "kitchen": Palette(saturation=(0.25, 0.85), value=(0.45, 0.95)),  # glazes, enamel
}


def _washer(p: dict[str, float]) -> sdf.Node:
    ro = p["outer_radius"]
    ri, t = ro * p["inner_ratio"], ro * p["thickness_ratio"]
    c = p["chamfer_ratio"] * t
    return sdf.Revolved(np.array([(ri, -t / 2), (ro - c, -t / 2), (ro, -t / 2 + c),
                                  (ro, t / 2 - c), (ro - c, t / 2), (ri, t / 2)]))


def _hex_nut(p: dict[str, float]) -> sdf.Node:
    a = p["across_flats"]
    h, c = a * p["height_ratio"], a * p["chamfer_ratio"]
    rc = a / math.sqrt(3.0)  # circumradius of a hexagon with width a across flats
    chamfer = sdf.Revolved(np.array([(0, -h / 2), (rc - c, -h / 2), (rc, -h / 2 + c),
                                     (rc, h / 2 - c), (rc - c, h / 2), (0, h / 2)]))
    body = sdf.Intersection((sdf.HexPrism(a / 2, h / 2), chamfer))
    return sdf.Difference(body, (sdf.Cylinder(a * p["bore_ratio"] / 2, h),))


def _l_bracket(p: dict[str, float]) -> sdf.Node:
    la = p["leg_length"]
    lb, w, t = la * p["rise_ratio"], la * p["width_ratio"], la * p["thickness_ratio"]
    r = p["hole_ratio"] * min(w, la - t, lb - t)
    legs = sdf.Union((sdf.Box((0, -w / 2, 0), (la, w / 2, t)), sdf.Box((0, -w / 2, 0), (t, w / 2, lb))))
    down = sdf.Moved(sdf.Cylinder(r, t), translation=((t + la) / 2, 0.0, t / 2))
    across = sdf.Moved(sdf.Cylinder(r, t), sdf.rotation_y(math.pi / 2), (t / 2, 0.0, (t + lb) / 2))
    return sdf.Difference(legs, (down, across))


def _bushing(p: dict[str, float]) -> sdf.Node:
    length, ro = p["length"], p["outer_radius"]
    ri, rf = ro * p["bore_ratio"], ro * p["flange_ratio"]
    tf, c = length * p["flange_thickness_ratio"], 0.3 * (ro - ri)
    return sdf.Revolved(np.array([(ri, 0), (rf, 0), (rf, tf), (ro, tf), (ro, length - c),
                                  (ro - c, length), (ri, length)]))


def _cup(p: dict[str, float]) -> sdf.Node:
    h, rt = p["height"], p["rim_radius"]
    rb, w = rt * p["base_ratio"], p["wall"]
    base = 1.5 * w
    outer = sdf.Revolved(np.array([(0, 0), (rb, 0), (rt, h), (0, h)]))
    slope = (rt - rb) / (h - base)  # the inner wall is w inside the outer one at base and rim
    top = 1.1 * h  # the cavity runs out through the rim
    cavity = sdf.Revolved(np.array([(0, base), (rb - w, base), (rb - w + slope * (top - base), top),
                                    (0, top)]))
    zm, big, small = 0.55 * h, p["handle_ratio"] * h, p["handle_thickness"]
    xc = rb + (rt - rb) * zm / h  # outer wall radius at the handle's centre height
    reach = (rt - rb) * (big + small) / h + small  # lets the lower end meet the tapered wall
    ring = sdf.Moved(sdf.Torus(big, small), sdf.rotation_x(math.pi / 2), (xc, 0.0, zm))
    handle = sdf.Intersection((ring, sdf.HalfSpace(0, xc - reach, sign=-1.0)))
    return sdf.Difference(sdf.Union((outer, handle)), (cavity,))


def _arc(r: float, depth: float, z0: float, n: int = 16) -> np.ndarray:
    """Quarter ellipse in (r, z) from (0, z0) on the axis up to (r, z0 + depth), (n + 1, 2)."""
    theta = np.linspace(0.0, math.pi / 2, n + 1)
    return np.stack([r * np.sin(theta), z0 + depth * (1.0 - np.cos(theta))], axis=1)


def _bowl(p: dict[str, float]) -> sdf.Node:
    r, w, hf = p["rim_radius"], p["wall"], p["foot_height"]
    d = r * p["depth_ratio"]
    outer = _arc(r, d, hf)  # (0, hf) .. (r, hf + d)
    inner = _arc(r - w, d - w, hf + w)[::-1]  # (r - w, hf + d) .. (0, hf + w)
    body = sdf.Revolved(np.concatenate([outer, inner]))
    rf, fw = r * p["foot_radius_ratio"], 1.2 * w

    def under(x: float) -> float:  # height of the outer surface at radius x
        return hf + d * (1.0 - math.sqrt(1.0 - (x / r) ** 2))

    foot = sdf.Revolved(np.array([(rf - fw, 0), (rf, 0), (rf, under(rf) + 0.4 * w),
                                  (rf - fw, under(rf - fw) + 0.4 * w)]))
    return sdf.Union((body, foot))


def _bottle(p: dict[str, float]) -> sdf.Node:
    h, rb = p["height"], p["body_radius"]
    rn, zs = rb * p["neck_ratio"], h * p["shoulder_ratio"]
    neck = h * p["neck_length_ratio"]
    lip_h, lip_w, bevel = 0.3 * neck, 0.15 * rn, 0.1 * rb
    zn = h - neck
    u = np.linspace(0.0, 1.0, 11)
    shoulder = np.stack([rn + (rb - rn) * (1 + np.cos(math.pi * u)) / 2, zs + (zn - zs) * u], axis=1)
    top = [(rn, h - lip_h), (rn + lip_w, h - lip_h), (rn + lip_w, h - 0.3 * lip_h),
           (rn + 0.7 * lip_w, h), (0, h)]
    return sdf.Revolved(np.concatenate([[(0, 0), (rb - bevel, 0), (rb, bevel)], shoulder, top]))


def _p(name, low, high, unit, description) -> Parameter:
    return Parameter(name, float(low), float(high), unit, description)


FAMILIES: tuple[Family, ...] = (
    Family("washer", "workshop", "flat ring with chamfered outer edges, lying flat", (
        _p("outer_radius", 4, 20, "mm", "outer radius"),
        _p("inner_ratio", 0.35, 0.7, "ratio", "hole radius / outer radius"),
        _p("thickness_ratio", 0.1, 0.25, "ratio", "thickness / outer radius"),
        _p("chamfer_ratio", 0.05, 0.3, "ratio", "outer edge chamfer / thickness"),
    ), _washer),
    Family("hex_nut", "workshop", "hexagonal nut with chamfered corners and a round bore", (
        _p("across_flats", 6, 30, "mm", "width across flats"),
        _p("height_ratio", 0.5, 0.9, "ratio", "height / across flats"),
        _p("bore_ratio", 0.45, 0.62, "ratio", "bore diameter / across flats"),
        _p("chamfer_ratio", 0.04, 0.12, "ratio", "corner chamfer / across flats"),
    ), _hex_nut),
    Family("l_bracket", "workshop", "angle bracket, one leg on the floor, a hole in each leg", (
        _p("leg_length", 20, 80, "mm", "floor leg length (along x)"),
        _p("rise_ratio", 0.5, 1.2, "ratio", "upright leg height / leg_length"),
        _p("width_ratio", 0.3, 0.8, "ratio", "width (along y) / leg_length"),
        _p("thickness_ratio", 0.06, 0.15, "ratio", "plate thickness / leg_length"),
        _p("hole_ratio", 0.15, 0.3, "ratio", "hole radius / the leg's free size"),
    ), _l_bracket),
    Family("bushing", "workshop", "flanged sleeve standing on its flange, through bore", (
        _p("length", 8, 40, "mm", "overall length"),
        _p("outer_radius", 3, 10, "mm", "sleeve outer radius"),
        _p("bore_ratio", 0.35, 0.7, "ratio", "bore radius / outer_radius"),
        _p("flange_ratio", 1.3, 1.8, "ratio", "flange radius / outer_radius"),
        _p("flange_thickness_ratio", 0.1, 0.25, "ratio", "flange thickness / length"),
    ), _bushing),
    Family("cup", "kitchen", "tapered cup with a base and a side handle (half torus)", (
        _p("height", 70, 120, "mm", "height"),
        _p("rim_radius", 30, 50, "mm", "outer radius at the rim"),
        _p("base_ratio", 0.7, 1.0, "ratio", "outer radius at the bottom / rim_radius"),
        _p("wall", 2.5, 5, "mm", "wall thickness (the base is 1.5 walls)"),
        _p("handle_ratio", 0.22, 0.32, "ratio", "handle ring radius / height"),
        _p("handle_thickness", 3, 6, "mm", "handle tube radius"),
    ), _cup),
    Family("bowl", "kitchen", "elliptic bowl on a foot ring", (
        _p("rim_radius", 60, 140, "mm", "outer radius at the rim"),
        _p("depth_ratio", 0.35, 0.6, "ratio", "depth / rim_radius"),
        _p("wall", 2.5, 6, "mm", "wall thickness"),
        _p("foot_radius_ratio", 0.3, 0.5, "ratio", "foot ring radius / rim_radius"),
        _p("foot_height", 3, 8, "mm", "foot ring height"),
    ), _bowl),
    Family("bottle", "kitchen", "sealed bottle: body, eased shoulder, neck and lip", (
        _p("height", 150, 300, "mm", "height"),
        _p("body_radius", 25, 45, "mm", "body radius"),
        _p("shoulder_ratio", 0.5, 0.7, "ratio", "shoulder start height / height"),
        _p("neck_ratio", 0.25, 0.45, "ratio", "neck radius / body_radius"),
        _p("neck_length_ratio", 0.1, 0.2, "ratio", "neck length / height"),
    ), _bottle),
)
_BY_NAME = {f.name: f for f in FAMILIES}


def builtin_families() -> list[Family]:
    """Every built-in family, in a fixed order."""
    return list(FAMILIES)


def family(name: str) -> Family:
    """The family called ``name``; a SourceError that lists the known ones otherwise."""
    if name not in _BY_NAME:
        raise SourceError(f"unknown built-in family {name!r}", where=f"builtin:{name}",
                          hint=f"known: {', '.join(_BY_NAME)}")
    return _BY_NAME[name]


def asset_name(family_name: str, index: int, seed: int) -> str:
    """``washer-0003`` for seed 0, ``washer-0003-s7`` for seed 7."""
    return f"{family_name}-{index:04d}" + (f"-s{seed}" if seed else "")


def make_builtin(family_name: str, index: int, seed: int = 0) -> Asset:
    """Built-in asset ``index`` of a family for ``seed`` (both non-negative integers)."""
    fam = family(family_name)
    if int(index) != index or index < 0 or int(seed) != seed or seed < 0:
        raise SourceError(f"index and seed must be non-negative integers, got {index} and {seed}",
                          where=f"builtin:{family_name}")
    index, seed = int(index), int(seed)
    g = rng(seed, index, f"builtin:{fam.name}")
    params = {p.name: float(g.uniform(p.low, p.high)) for p in fam.parameters}
    paint = draw_paint(g, PALETTES[fam.scenario])
    node_mm = fam.build(params)
    lo, hi = node_mm.bounds()  # (3,), (3,) in mm
    centre = (lo + hi) / 2.0
    unit_mm = float(np.max(hi - lo)) / 2.0 / FIT  # millimetres per object unit
    record = {"family": fam.name, "version": FAMILY_VERSION, "parameters": params,
              "paint": paint.to_dict()}
    digest = hashlib.sha256(json.dumps(record, sort_keys=True).encode()).hexdigest()
    return Asset(
        name=asset_name(fam.name, index, seed),
        family=fam.name,
        source=f"builtin:{fam.name}:seed={seed}:index={index}",
        metric_half_extent=unit_mm * 1e-3,
        offset=tuple(float(c) * 1e-3 for c in centre),  # type: ignore[arg-type]
        content_hash=digest,
        parameters={**params, "pattern": paint.pattern},
        geometry=AnalyticGeometry(sdf.Scaled(node_mm, unit_mm, tuple(centre)), paint),
    )


def builtin_assets(counts: dict[str, int], seed: int = 0) -> list[Asset]:
    """``counts[family]`` assets of each family (indices 0..n-1), in the order of ``counts``."""
    out = []
    for name, n in counts.items():
        family(name)
        if int(n) != n or n < 0:
            raise SourceError(f"count of {name!r} must be a non-negative integer, got {n!r}",
                              where=f"builtin:{name}")
        out.extend(make_builtin(name, i, seed) for i in range(int(n)))
    return out


def describe_families() -> str:
    """Every family with its parameters and ranges, as ``genfield train --list-families`` prints."""
    lines = []
    for fam in FAMILIES:
        lines.append(f"{fam.name} ({fam.scenario}): {fam.description}")
        for p in fam.parameters:
            span = f"{p.low:g} .. {p.high:g}"
            lines.append(f"  {p.name:24s} {span:>13s} {p.unit:5s}  {p.description}")
    lines += [
        "",
        "every family: normalised into [-1, 1]^3 (largest half-extent 0.9), upright, centred;",
        "paint: a base colour (workshop: saturation 0-0.45, value 0.35-0.9; kitchen: saturation",
        "0.25-0.85, value 0.45-0.95) and one pattern: bands, split (two-tone) or speckle.",
    ]
    return "\n".join(lines)
