"""Shards (--shard i/n) merged with merge_shards equal one whole run byte for byte; shards of
different jobs, unfinished shards and incomplete sets are refused."""

from __future__ import annotations

import json
from dataclasses import replace

import pytest
from _dataset_doubles import spec, tree

from genfield.cli import main
from genfield.dataset.merge import merge_shards
from genfield.dataset.writer import write_dataset
from genfield.errors import DatasetError, UsageError


@pytest.fixture(scope="module")
def shards(tmp_path_factory):
    base = tmp_path_factory.mktemp("shards")
    write_dataset(base / "whole", spec(count=7))
    for i in range(3):
        write_dataset(base / f"s{i}", spec(count=7), shard=(i, 3))
    return base


def test_a_shard_renders_every_nth_image(shards):
    manifest = json.loads((shards / "s1" / "manifest.json").read_text())
    assert manifest["shard"] == {"index": 1, "of": 3} and manifest["images"] == 2
    assert sorted(p.name for p in (shards / "s1" / "images").iterdir()) == ["000001.png", "000004.png"]
    whole = tree(shards / "whole")
    for name, sha in tree(shards / "s1").items():  # image i is the same bytes in a shard
        if name.startswith(("images/", "masks/", "depth/", "records/")):
            assert whole[name] == sha


def test_merged_shards_equal_the_whole_run(shards, tmp_path):
    n = merge_shards([shards / "s2", shards / "s0", shards / "s1"], tmp_path / "merged")
    assert n == 7
    assert tree(tmp_path / "merged") == tree(shards / "whole")


def test_merge_refuses_shards_of_another_job(shards, tmp_path):
    write_dataset(tmp_path / "other1", spec(count=7, seed=99), shard=(1, 3))
    with pytest.raises(DatasetError, match="different job.*seed"):
        merge_shards([shards / "s0", tmp_path / "other1", shards / "s2"], tmp_path / "m")
    other_model = replace(spec(count=7), model_bytes=b"another model")
    write_dataset(tmp_path / "other2", other_model, shard=(1, 3))
    with pytest.raises(DatasetError, match="model sha256"):
        merge_shards([shards / "s0", tmp_path / "other2", shards / "s2"], tmp_path / "m")


def test_merge_refuses_missing_or_repeated_shards_and_whole_datasets(shards, tmp_path):
    with pytest.raises(DatasetError, match="missing 1/3"):
        merge_shards([shards / "s0", shards / "s2"], tmp_path / "m")
    with pytest.raises(DatasetError, match="given twice 2/3"):
        merge_shards([shards / "s0", shards / "s2", shards / "s2"], tmp_path / "m")
    with pytest.raises(DatasetError, match="not a shard"):
        merge_shards([shards / "whole"], tmp_path / "m")
    with pytest.raises(UsageError):
        merge_shards([shards / "s0"], shards / "s0")


def test_merge_refuses_a_corrupt_shard_file(shards, tmp_path):
    broken = tmp_path / "s1"
    write_dataset(broken, spec(count=7), shard=(1, 3))
    (broken / "masks" / "000004.png").write_bytes(b"\x89PNG broken")
    with pytest.raises(DatasetError, match="corrupt"):
        merge_shards([shards / "s0", broken, shards / "s2"], tmp_path / "m")


def test_merge_command_gives_one_line_errors(shards, tmp_path, capsys):
    assert main(["merge", str(shards / "s0"), "--out", str(tmp_path / "m")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "missing 1/3, 2/3" in err[0]
    assert main(["merge", *(str(shards / f"s{i}") for i in range(3)), "--out", str(tmp_path / "m2")]) == 0
    assert tree(tmp_path / "m2") == tree(shards / "whole")
