"""Many independent renders as a map over jobs: walk-by frames, sight lines, the cloaked zone."""
