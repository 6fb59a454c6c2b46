"""Forked worker processes and shared memory for the pass and the burst regions; heap settings."""

from ._heap import keep_freed_memory
from ._workers import default_workers, fork_map, fork_workers, shared_zeros

__all__ = ["keep_freed_memory", "default_workers", "fork_map", "fork_workers", "shared_zeros"]
