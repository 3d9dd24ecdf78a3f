"""Meshes of any variant: coarse-to-fine isosurface extraction, colours, export."""
