"""Analyses built on the decomposition: clashes, comparison of two structures, trajectories,
pair statistics, the electrostatics-model comparison, axis orders and clustering."""
