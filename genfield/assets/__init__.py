"""Training sources: procedural part families, imported meshes, ground-truth point samples."""
