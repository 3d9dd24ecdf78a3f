"""Built-in families: names, determinism, normalisation, distance bounds, paint, errors."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.spatial import cKDTree

from genfield.assets import builtin_assets, builtin_families, describe_families, make_builtin
from genfield.assets.asset import FIT
from genfield.assets.families import FAMILY_VERSION
from genfield.assets.paint import PATTERNS, Paint
from genfield.colour import linear_to_srgb, srgb_to_linear
from genfield.errors import SourceError

NAMES = [f.name for f in builtin_families()]


def test_at_least_six_families_in_two_scenarios_with_documented_ranges():
    fams = builtin_families()
    assert len(fams) >= 6
    assert {f.scenario for f in fams} == {"workshop", "kitchen"}
    for f in fams:
        assert f.parameters and all(p.low < p.high and p.description for p in f.parameters)
    text = describe_families()
    for f in fams:
        assert f.name in text
        for p in f.parameters:
            assert p.name in text and f"{p.low:g} .. {p.high:g}" in text


def test_names_are_stable_and_unique_per_family_index_seed():
    assert make_builtin("washer", 3).name == "washer-0003"
    assert make_builtin("washer", 3, seed=7).name == "washer-0003-s7"
    assert make_builtin("washer", 3, seed=7).source == "builtin:washer:seed=7:index=3"
    names = {a.name for a in builtin_assets({"cup": 3, "bowl": 2}, seed=0)}
    names |= {a.name for a in builtin_assets({"cup": 3, "bowl": 2}, seed=5)}
    assert len(names) == 10


def test_same_numbers_give_the_same_asset_and_order_does_not_matter():
    a = make_builtin("hex_nut", 5, seed=2)
    b = builtin_assets({"cup": 4, "hex_nut": 6}, seed=2)[4 + 5]
    assert a.name == b.name and a.content_hash == b.content_hash
    assert a.parameters == b.parameters
    assert make_builtin("hex_nut", 6, seed=2).content_hash != a.content_hash
    assert make_builtin("hex_nut", 5, seed=3).content_hash != a.content_hash
    # the hash pins the geometry version, so a change to a family moves every cache key
    assert isinstance(FAMILY_VERSION, int)


@pytest.mark.parametrize("family", NAMES)
def test_assets_fill_the_cube_with_a_margin_centred_and_upright(family):
    g = np.random.default_rng(0)
    p = g.uniform(-1, 1, (200_000, 3))
    for index in range(3):
        a = make_builtin(family, index)
        lo, hi = a.geometry.node.bounds()
        assert np.max(hi - lo) / 2 == pytest.approx(FIT)  # largest half-extent is exactly FIT
        assert np.allclose((lo + hi) / 2, 0.0, atol=1e-12)  # centred on its box
        inside = p[a.sdf(p) < 0]
        assert len(inside) > 500
        assert (np.abs(inside) <= FIT + 1e-9).all()
        assert a.metric_half_extent > 0 and a.analytic and a.family == family
        occ = a.occupancy(p[:1000])
        assert occ.dtype == np.float32 and set(np.unique(occ)) <= {0.0, 1.0}


@pytest.mark.parametrize("family", NAMES)
def test_distance_is_a_lipschitz_lower_bound(family):
    # Sphere tracing needs |f| <= true distance and |f(a) - f(b)| <= |a - b| (Hart 1996).
    # The true distance is measured as the nearest of many exact surface samples (k-d tree).
    a = make_builtin(family, 1)
    g = np.random.default_rng(1)
    surf, _ = a.geometry.surface(150_000, g)
    q = g.uniform(-1, 1, (3000, 3))
    true, _ = cKDTree(surf).query(q)
    spacing = 0.03  # the samples' spacing bounds how far the nearest sample is beyond the truth
    assert (np.abs(a.sdf(q)) <= true + 1e-9).all()
    assert np.mean(np.abs(a.sdf(q)) >= true - spacing) > 0.9  # and usually tight
    b = q + g.normal(scale=0.05, size=q.shape)
    assert (np.abs(a.sdf(q) - a.sdf(b)) <= np.linalg.norm(q - b, axis=1) + 1e-9).all()


@pytest.mark.parametrize("family", NAMES)
def test_colour_is_srgb_in_range_and_patterns_show_two_colours(family):
    a = make_builtin(family, 2)
    surf, srgb = a.geometry.surface(20_000, np.random.default_rng(2))
    assert srgb.dtype == np.float32 and srgb.min() >= 0 and srgb.max() <= 1
    assert np.allclose(a.colour_srgb(surf), srgb)


def _paint(pattern: str, **kw) -> Paint:
    base = dict(base=(0.8, 0.2, 0.1), second=(0.1, 0.3, 0.9), pattern=pattern,
                axis=(0.0, 0.0, 1.0), frequency=4.0, phase=0.1, duty=0.3, offset=0.2,
                radius=0.2, salt=11)
    return Paint(**{**base, **kw})


def test_patterns_cover_the_share_they_promise():
    p = np.random.default_rng(3).uniform(-1, 1, (200_000, 3))
    second = np.array([0.1, 0.3, 0.9], np.float32)

    def share(paint):
        return np.mean(np.all(paint.srgb(p) == second, axis=1))

    assert share(_paint("bands")) == pytest.approx(0.3, abs=0.01)  # duty of each period
    assert share(_paint("split")) == pytest.approx(0.4, abs=0.01)  # z > 0.2 of [-1, 1]
    # speckle: cells with a dot (duty 0.3) times the dot's share of a cell (4/3 pi 0.2^3)
    assert share(_paint("speckle")) == pytest.approx(0.3 * 4 / 3 * np.pi * 0.2**3, abs=0.002)
    assert set(PATTERNS) == {"bands", "split", "speckle"}
    with pytest.raises(ValueError):
        _paint("plaid").srgb(p[:3])


def test_srgb_round_trip_within_one_step_of_255():
    # IEC 61966-2-1 transfer functions (genfield.colour): encode(decode(c)) within 1/255.
    c = np.random.default_rng(4).random((10_000, 3))
    assert np.abs(linear_to_srgb(srgb_to_linear(c)) - c).max() < 1 / 255
    # published points of the curve: the break 0.04045 -> 0.0031308, white and black fixed
    assert srgb_to_linear(np.array(0.04045)) == pytest.approx(0.0031308, abs=1e-6)
    assert srgb_to_linear(np.array([0.0, 1.0])).tolist() == [0.0, 1.0]


def test_bad_family_and_numbers_raise_source_errors():
    with pytest.raises(SourceError, match="unknown built-in family 'wahser'") as err:
        make_builtin("wahser", 0)
    assert "washer" in err.value.one_line()  # the hint lists the known ones
    with pytest.raises(SourceError, match="non-negative"):
        make_builtin("washer", -1)
    with pytest.raises(SourceError, match="count"):
        builtin_assets({"washer": -2})


def test_train_list_families_prints_the_table(capsys):
    from genfield.cli import main

    assert main(["train", "--list-families"]) == 0
    out = capsys.readouterr().out
    assert out.strip() == describe_families().strip()
    assert "hex_nut (workshop)" in out and "bottle (kitchen)" in out
