"""The model file: a lossless round trip, the code table without torch, and clear errors for
truncated, tampered, foreign and newer files."""

from __future__ import annotations

import json
import struct
import subprocess
import sys

import numpy as np
import pytest
import torch
from _field_toys import tiny_model
from safetensors.numpy import save_file

from genfield.errors import ModelFileError
from genfield.field.codebook import read_codebook
from genfield.field.model import load_model
from genfield.field.modelfile import FORMAT_VERSION


@pytest.fixture(scope="module")
def saved(tmp_path_factory):
    torch.set_num_threads(1)
    model, _ = tiny_model(steps=30)
    model.metrics = {"steps": 30, "note": "test"}
    path = tmp_path_factory.mktemp("model") / "m.safetensors"
    model.save(path)
    return model, path


def test_round_trip_keeps_weights_codes_prior_and_answers(saved):
    model, path = saved
    back = load_model(path)
    assert back.config == model.config
    assert back.codebook.names == model.codebook.names
    assert back.codebook.families == model.codebook.families
    assert back.sources == model.sources
    assert back.metrics == model.metrics
    assert back.prior_info == model.prior_info
    for a, b in [(back.codebook.shape, model.codebook.shape),
                 (back.codebook.prior_chols, model.codebook.prior_chols)]:
        assert np.array_equal(a, b)
    pts = np.random.default_rng(1).uniform(-1, 1, (500, 3)).astype(np.float32)
    s, a = model.codes(model.codebook.names[0])
    for x, y in zip(model.query(pts, s, a), back.query(pts, s, a), strict=True):
        assert np.array_equal(x, y)
    assert back.identity == model.identity


def test_saving_twice_gives_the_same_bytes(saved, tmp_path):
    model, path = saved
    model.save(tmp_path / "again.safetensors")
    assert (tmp_path / "again.safetensors").read_bytes() == path.read_bytes()


def test_metadata_is_json_and_no_pickle(saved):
    _, path = saved
    raw = path.read_bytes()
    (n,) = struct.unpack("<Q", raw[:8])
    header = json.loads(raw[8 : 8 + n])  # the safetensors header is plain JSON
    meta = header["__metadata__"]
    assert meta["format"] == "genfield-field"
    assert int(meta["format_version"]) == FORMAT_VERSION
    for key in ("config", "names", "families", "sources", "prior", "metrics"):
        json.loads(meta[key])
    assert b"\x80\x04" not in raw[:16]  # not a pickle stream


def test_code_table_is_read_without_torch(saved):
    _, path = saved
    probe = subprocess.run(
        [sys.executable, "-c",
         "import sys; from genfield.field.codebook import read_codebook; "
         f"b = read_codebook({str(path)!r}); print(len(b.names), 'torch' in sys.modules)"],
        capture_output=True, text=True, timeout=60)
    assert probe.returncode == 0, probe.stderr
    assert probe.stdout.split() == ["3", "False"]
    book = read_codebook(path)
    s, a = book.sample_prior(np.random.default_rng(0), temperature=0.0, component=0)
    assert np.allclose(np.concatenate([s, a]), book.prior_means[0], atol=1e-6)


def _error(path) -> ModelFileError:
    with pytest.raises(ModelFileError) as info:
        load_model(path)
    assert str(path) in info.value.one_line()
    return info.value


def test_truncated_file_is_a_clear_error(saved, tmp_path):
    _, path = saved
    raw = path.read_bytes()
    for cut in (5, 100, len(raw) // 2, len(raw) - 1):
        bad = tmp_path / f"cut{cut}.safetensors"
        bad.write_bytes(raw[:cut])
        assert "truncated" in _error(bad).message


def test_a_changed_weight_byte_is_caught_by_the_checksum(saved, tmp_path):
    _, path = saved
    raw = bytearray(path.read_bytes())
    raw[-10] ^= 0x01  # inside the last tensor's data
    bad = tmp_path / "tampered.safetensors"
    bad.write_bytes(bytes(raw))
    assert "checksum" in _error(bad).message


def test_changed_metadata_is_caught_by_the_checksum(saved, tmp_path):
    _, path = saved
    raw = path.read_bytes()
    bad = tmp_path / "meta.safetensors"
    bad.write_bytes(raw.replace(b'\\"steps\\": 30', b'\\"steps\\": 99'))
    assert bad.read_bytes() != raw
    assert "checksum" in _error(bad).message


def test_foreign_files_are_refused(tmp_path):
    other = tmp_path / "other.safetensors"
    save_file({"w": np.zeros(3, np.float32)}, str(other), metadata={"x": "1"})
    assert "not a genfield model file" in _error(other).message
    text = tmp_path / "notes.safetensors"
    text.write_text("hello, not a model")
    assert "not a readable safetensors file" in _error(text).message
    assert "not found" in _error(tmp_path / "missing.safetensors").message


def test_a_newer_format_is_refused_with_a_message(saved, tmp_path):
    from safetensors import safe_open

    _, path = saved
    with safe_open(str(path), framework="np") as f:
        meta = dict(f.metadata())
        tensors = {k: f.get_tensor(k) for k in f.keys()}  # noqa: SIM118
    meta["format_version"] = str(FORMAT_VERSION + 1)
    newer = tmp_path / "newer.safetensors"
    save_file(tensors, str(newer), metadata=meta)
    err = _error(newer)
    assert "newer genfield" in err.message and "upgrade" in err.hint


def test_cli_reports_a_bad_model_in_one_line(tmp_path):
    bad = tmp_path / "bad.safetensors"
    bad.write_bytes(b"\x00" * 64)
    proc = subprocess.run([sys.executable, "-m", "genfield", "inspect", str(bad)],
                          capture_output=True, text=True, timeout=60)
    assert proc.returncode == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("genfield: error: ") and str(bad) in lines[0]


def test_a_file_from_before_colour_waves_loads_as_a_network_without_them(tmp_path):
    # Files written before NetworkConfig.colour_waves existed have no such key and no
    # net.waves.* tensors; they must keep loading and answering as they did.
    import dataclasses

    from genfield.field.modelfile import write_model_file
    from genfield.field.network import FieldNetwork

    torch.set_num_threads(1)
    model, _ = tiny_model(steps=12)
    net_cfg = dataclasses.replace(model.config.network, colour_waves=0)
    cfg = dataclasses.replace(model.config, network=net_cfg)
    torch.manual_seed(0)
    old = dataclasses.replace(model, config=cfg, network=FieldNetwork(net_cfg))
    stored = cfg.to_dict()
    del stored["network"]["colour_waves"]
    assert not any(k.startswith("net.waves") for k in old.tensors())
    write_model_file(tmp_path / "old.gfm", old.tensors(), {
        "config": stored, "names": list(old.codebook.names), "families": list(old.codebook.families),
        "sources": list(old.sources), "prior": old.prior_info, "metrics": {}})
    back = load_model(tmp_path / "old.gfm")
    assert back.config.network.colour_waves == 0 and back.network.waves is None
    pts = np.random.default_rng(2).uniform(-1, 1, (200, 3)).astype(np.float32)
    s, a = old.codes(old.codebook.names[0])
    for x, y in zip(old.query(pts, s, a), back.query(pts, s, a), strict=True):
        assert np.array_equal(x, y)
