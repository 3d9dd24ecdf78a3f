"""Training configs: presets load, and every kind of mistake names its key and line."""

from __future__ import annotations

import pytest

from genfield.errors import ConfigError
from genfield.field.config import PRESETS_DIR, TrainConfig, config_from_dict, load_config


@pytest.mark.parametrize("name", ["quick", "default"])
def test_presets_load_and_round_trip_through_json(name):
    cfg, base = load_config(name)
    assert base == PRESETS_DIR
    assert cfg.sources.families
    assert config_from_dict(cfg.to_dict()) == cfg


def _write(tmp_path, text: str):
    path = tmp_path / "run.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _error(tmp_path, text: str) -> ConfigError:
    with pytest.raises(ConfigError) as info:
        load_config(str(_write(tmp_path, text)))
    return info.value


GOOD = """\
seed = 1
[sources]
families = { washer = 2 }
[training]
steps = 10
warmup_steps = 2
"""


def test_a_small_config_reads_its_values(tmp_path):
    cfg, base = load_config(str(_write(tmp_path, GOOD)))
    assert isinstance(cfg, TrainConfig)
    assert cfg.seed == 1 and cfg.training.steps == 10
    assert cfg.sources.families == {"washer": 2}
    assert cfg.network.width == 128  # defaults fill what is not given
    assert base == tmp_path


def test_unknown_key_names_its_path_line_and_a_near_match(tmp_path):
    err = _error(tmp_path, GOOD + "stpes = 5\n")
    assert err.where == f"{tmp_path / 'run.toml'}:7"
    assert "training.stpes: unknown key" in err.message
    assert "'steps'" in err.hint


def test_unknown_table_is_an_error(tmp_path):
    err = _error(tmp_path, GOOD + "[netwrok]\nwidth = 3\n")
    assert "netwrok: unknown key" in err.message
    assert err.where.endswith(":7")


def test_wrong_type_names_key_and_line(tmp_path):
    err = _error(tmp_path, GOOD.replace("steps = 10", 'steps = "ten"'))
    assert err.where.endswith(":5")
    assert "training.steps: expected an integer" in err.message


def test_booleans_are_not_integers(tmp_path):
    err = _error(tmp_path, GOOD.replace("steps = 10", "steps = true"))
    assert "expected an integer" in err.message


def test_impossible_value_is_refused(tmp_path):
    err = _error(tmp_path, GOOD.replace("steps = 10", "steps = 0"))
    assert "training.steps: must be >= 1, got 0" in err.message
    err = _error(tmp_path, GOOD + "lr_network = 0.0\n")
    assert "must be > 0.0" in err.message


def test_a_family_count_inside_an_inline_table_points_at_its_line(tmp_path):
    err = _error(tmp_path, GOOD.replace("washer = 2", "washer = 0"))
    assert err.where.endswith(":3")
    assert "sources.families.washer" in err.message


def test_a_choice_outside_its_list_is_refused(tmp_path):
    err = _error(tmp_path, GOOD + '[prior]\nkind = "gaussian"\n')
    assert err.where.endswith(":8")
    assert "prior.kind: must be one of 'kernel', 'family', 'single'" in err.message


def test_no_sources_is_refused(tmp_path):
    err = _error(tmp_path, "seed = 0\n")
    assert "no training sources" in err.message


def test_warmup_must_be_shorter_than_training(tmp_path):
    err = _error(tmp_path, GOOD.replace("warmup_steps = 2", "warmup_steps = 10"))
    assert "training.warmup_steps" in err.message


def test_bad_toml_reports_its_line(tmp_path):
    err = _error(tmp_path, "seed = 0\n[sources\n")
    assert err.where.endswith(":2:9")
    assert "not valid TOML" in err.message


def test_unknown_preset_lists_the_presets():
    with pytest.raises(ConfigError) as info:
        load_config("nonesuch")
    assert "quick" in info.value.hint and "default" in info.value.hint
