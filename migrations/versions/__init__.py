"""Migration scripts, oldest first by their ``down_revision`` chain."""
