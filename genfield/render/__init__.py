"""The compositional volume renderer: cameras, poses, composition, shading, exact labels."""
