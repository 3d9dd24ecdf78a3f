"""The writer's guarantees: same bytes whatever the workers, refusal of occupied folders,
resume that re-verifies and redoes, clean stops on Ctrl-C and on write errors."""

from __future__ import annotations

import errno
import json
from dataclasses import replace

import pytest
from _dataset_doubles import spec, tree

from genfield.dataset import files as files_module
from genfield.dataset import job as job_module
from genfield.dataset.writer import write_dataset
from genfield.errors import DatasetError, UsageError


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    """An uninterrupted single-process run, the dataset every other run must equal."""
    root = tmp_path_factory.mktemp("ref") / "ds"
    write_dataset(root, spec(count=10))
    return tree(root)


def test_one_and_two_workers_write_identical_bytes(tmp_path, reference):
    summary = write_dataset(tmp_path / "two", spec(count=10), workers=2)
    assert summary.rendered == 10
    assert tree(tmp_path / "two") == reference


def test_manifest_lists_every_file_with_its_hash(tmp_path, reference):
    root = tmp_path / "ds"
    write_dataset(root, spec(count=10))
    manifest = json.loads((root / "manifest.json").read_text())
    assert manifest["complete"] is True
    assert manifest["files"] == {k: v for k, v in reference.items() if k != "manifest.json"}
    assert manifest["recipe"]["text"] == spec().recipe_text
    assert sum(manifest["split_counts"].values()) == 10
    assert manifest["encoding"]["depth"]["metres_per_unit"] == 0.001


def test_a_non_empty_folder_is_refused_without_resume_or_force(tmp_path):
    (tmp_path / "ds").mkdir()
    (tmp_path / "ds" / "notes.txt").write_text("mine")
    with pytest.raises(DatasetError, match="not empty"):
        write_dataset(tmp_path / "ds", spec(count=2))
    with pytest.raises(DatasetError, match="did not write"):  # --force never deletes others' files
        write_dataset(tmp_path / "ds", spec(count=2), force=True)
    assert (tmp_path / "ds" / "notes.txt").read_text() == "mine"
    with pytest.raises(UsageError):
        write_dataset(tmp_path / "ds", spec(count=2), force=True, resume=True)


def test_force_replaces_an_earlier_dataset(tmp_path, reference):
    write_dataset(tmp_path / "ds", spec(count=3, seed=9, outputs=("image", "mask")))
    write_dataset(tmp_path / "ds", spec(count=10), force=True)
    assert tree(tmp_path / "ds") == reference


def test_resume_refuses_a_different_job(tmp_path):
    write_dataset(tmp_path / "ds", spec(count=4))
    with pytest.raises(DatasetError, match="seed"):
        write_dataset(tmp_path / "ds", spec(count=4, seed=4), resume=True)


def test_resume_redoes_missing_and_corrupt_files_only(tmp_path, reference):
    root = tmp_path / "ds"
    write_dataset(root, spec(count=10))
    (root / "images" / "000002.png").unlink()
    blob = bytearray((root / "depth" / "000007.png").read_bytes())
    blob[60] ^= 0xFF
    (root / "depth" / "000007.png").write_bytes(bytes(blob))
    (root / "records" / "000004.json").write_text("{not json")
    (root / "annotations.json").write_text("[]")
    summary = write_dataset(root, spec(count=10), resume=True)
    assert (summary.rendered, summary.kept) == (3, 7)
    assert tree(root) == reference


def test_ctrl_c_stops_cleanly_and_resume_finishes(tmp_path, monkeypatch, reference):
    root = tmp_path / "ds"
    calls = {"n": 0}
    real = job_module.render_task

    def interrupting(job, index):
        calls["n"] += 1
        if calls["n"] == 5:
            raise KeyboardInterrupt
        return real(job, index)

    monkeypatch.setattr("genfield.dataset.executors.render_task", interrupting)
    with pytest.raises(KeyboardInterrupt):
        write_dataset(root, spec(count=10))
    manifest = json.loads((root / "manifest.json").read_text())
    assert manifest["complete"] is False and manifest["files"] == {}
    assert len(list((root / "records").iterdir())) == 4
    assert not list(root.rglob(".*"))  # no temp file left behind
    monkeypatch.setattr("genfield.dataset.executors.render_task", real)
    summary = write_dataset(root, spec(count=10), resume=True)
    assert (summary.rendered, summary.kept) == (6, 4)
    assert tree(root) == reference


def test_a_full_disk_is_a_clear_error_and_leaves_no_half_file(tmp_path, monkeypatch, reference):
    root = tmp_path / "ds"
    real_write = files_module._HashingWriter.write
    calls = {"n": 0}

    def write(self, data):
        calls["n"] += 1
        if calls["n"] == 12:  # mid-dataset, mid-file: half the bytes go out, then ENOSPC
            real_write(self, data[: len(data) // 2])
            raise OSError(errno.ENOSPC, "No space left on device")
        return real_write(self, data)

    monkeypatch.setattr(files_module._HashingWriter, "write", write)
    with pytest.raises(DatasetError, match="disk is full") as caught:
        write_dataset(root, spec(count=10))
    assert "--resume" in caught.value.one_line()
    assert not list(root.rglob(".*"))  # the temp file is gone
    records = sorted(p.name for p in (root / "records").iterdir())
    assert 0 < len(records) < 10
    for folder in ("images", "masks", "depth", "normals"):  # only whole images are committed
        stems = {p.stem for p in (root / folder).iterdir()}
        assert {r.removesuffix(".json") for r in records} <= stems
    assert json.loads((root / "manifest.json").read_text())["complete"] is False
    monkeypatch.setattr(files_module._HashingWriter, "write", real_write)
    write_dataset(root, spec(count=10), resume=True)
    assert tree(root) == reference


def test_a_worker_error_reaches_the_caller(tmp_path):
    bad = replace(spec(count=3), classes=("ball",))  # the double also draws "bead"s
    with pytest.raises(ValueError, match="bead"):
        write_dataset(tmp_path / "ds", bad, workers=2)

