"""Show what a model file holds: codes, sources, prior, metrics, sizes.

Reads the file without torch (numpy and safetensors only); a damaged, foreign or newer file
is reported in one line.
"""

from __future__ import annotations

import argparse


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("model", help="model file")
    p.add_argument("--json", action="store_true", help="print JSON (with the code vectors)")
    p.add_argument("--sheet", metavar="PNG",
                   help="also render every named code in a labelled grid (genfield.sheets)")


def summary(path: str) -> dict:
    """Everything ``inspect`` shows, as JSON-able data."""
    import os

    import numpy as np

    from genfield.field.codebook import codebook_from_contents
    from genfield.field.modelfile import read_model_file

    contents = read_model_file(path)
    meta = contents.meta
    book = codebook_from_contents(contents.tensors, meta["names"], meta["families"], path)
    params = sum(int(v.size) for k, v in contents.tensors.items() if k.startswith("net."))
    codes = [{"name": n, "family": f, "source": s,
              "shape_norm": round(float(np.linalg.norm(z)), 4),
              "appearance_norm": round(float(np.linalg.norm(a)), 4),
              "shape": [round(float(x), 6) for x in z],
              "appearance": [round(float(x), 6) for x in a]}
             for n, f, s, z, a in zip(book.names, book.families, meta["sources"], book.shape,
                                      book.appearance, strict=True)]
    return {
        "file": path, "format_version": meta["format_version"],
        "genfield_version": meta["genfield_version"],
        "sizes": {"file_bytes": os.path.getsize(path), "network_parameters": params,
                  "codes": len(book.names), "shape_dim": book.shape_dim,
                  "appearance_dim": book.appearance_dim},
        "config": meta["config"], "prior": {**meta["prior"],
                                            "weights": [round(float(w), 6) for w in book.prior_weights]},
        "metrics": meta["metrics"], "codes": codes,
    }


def _text(info: dict) -> str:
    from collections import Counter

    s, cfg, m = info["sizes"], info["config"], info["metrics"]
    net = cfg["network"]
    fams = Counter(c["family"] for c in info["codes"])
    lines = [
        f"{info['file']}: genfield model format {info['format_version']}, written by genfield "
        f"{info['genfield_version']}",
        f"size: {s['file_bytes'] / 1024:.0f} KiB; {s['network_parameters']:,} network "
        f"parameters; {s['codes']} codes (shape {s['shape_dim']} + appearance {s['appearance_dim']})",
        f"network: positional encoding {net['octaves']} octaves, trunk {net['depth']} x "
        f"{net['width']}, feature {net['feature_dim']}, colour head {net['colour_width']}",
        f"training: {m.get('steps', '?')} steps, seed {cfg['seed']}, threads {cfg['threads']}; "
        "codes per family: " + ", ".join(f"{f} {n}" for f, n in sorted(fams.items())),
    ]
    fit = m.get("fit")
    if fit:
        lines.append(f"fit: IoU@{m['iou_resolution']} mean {fit['iou_mean']:.4f}, worst "
                     f"{fit['iou_worst']:.4f} ({fit['iou_worst_asset']}); colour L1 "
                     f"{fit['colour_l1_mean']:.4f}")
        for fam, b in fit["per_family"].items():
            lines.append(f"  {fam:14s} IoU mean {b['iou_mean']:.4f} worst {b['iou_worst']:.4f}"
                         f"  colour L1 {b['colour_l1_mean']:.4f}  ({b['assets']} assets)")
    v = m.get("views")
    if v:
        lines.append(f"views: mask IoU mean {v['mask_iou_mean']:.4f}, worst "
                     f"{v['mask_iou_worst']:.4f}; PSNR {v['psnr_mean']:.2f} dB "
                     f"({v['views_per_asset']} views per asset, {v['size']} px)")
    p = m.get("prior")
    if p:
        lines.append(f"prior samples: {p['valid_fraction']:.3f} valid at T={p['temperature']:g} "
                     f"({p['samples']} draws)")
        g = p.get("generative")
        if g:
            lines.append(f"  against {g['reference']} unseen assets: COV {g['coverage']:.3f}, "
                         f"MMD-CD {g['mmd_chamfer_l1']:.4f}, 1-NNA {g['nna']:.3f} (ideal 0.5)")
    prior = info["prior"]
    width = f", bandwidth {prior['bandwidth']:g}" if "bandwidth" in prior else ""
    lines.append(f"prior: {prior.get('kind', '?')}{width}, {prior.get('covariance', '')}, "
                 f"{len(prior.get('components', []))} component(s)")
    for g in prior.get("groups", []):
        shrink = "pooled" if g["shrinkage"] is None else f"shrinkage {g['shrinkage']:.3f}"
        lines.append(f"  {g['family']:14s} {g['codes']} codes, covariance {shrink}")
    for name, f in m.get("fitted", {}).items():
        lines.append(f"fitted: {name} IoU {f['iou']:.4f}, colour L1 {f['colour_l1']:.4f} "
                     f"(from {f['source']})")
    lines.append("codes:")
    width = max([len(c["name"]) for c in info["codes"]] + [4])
    for c in info["codes"]:
        lines.append(f"  {c['name']:{width}s}  {c['family']:10s} |shape| {c['shape_norm']:.3f} "
                     f"|appearance| {c['appearance_norm']:.3f}  {c['source']}")
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    import json

    info = summary(args.model)
    print(json.dumps(info, indent=2) if args.json else _text(info))
    if args.sheet:
        import sys

        from genfield.sheets.make import write_code_sheet

        print(f"wrote {write_code_sheet(args.model, args.sheet)}", file=sys.stderr)
    return 0
