"""Dataset folders: writer, annotation formats, factors, manifest, resume, shards, reader."""
