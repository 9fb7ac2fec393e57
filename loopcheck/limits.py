"""Limits applied to untrusted fab outputs (a contractor's zip): sizes, counts, archive members."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class InputLimits:
    max_file_bytes: int = 200 * 1024 * 1024        # one fab file
    max_zip_members: int = 500
    max_zip_uncompressed_bytes: int = 500 * 1024 * 1024
    max_zip_ratio: float = 200.0                   # uncompressed / compressed, a zip-bomb guard
    max_step_repeat_objects: int = 2_000_000       # graphic objects after step-and-repeat expansion
    max_objects_per_layer: int = 5_000_000


DEFAULT_LIMITS = InputLimits()
