"""Limits applied to untrusted fab outputs (a contractor's zip): sizes, counts, archive members."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class InputLimits:
    max_file_bytes: int = 200 * 1024 * 1024        # one fab file
    max_zip_members: int = 500
    max_zip_uncompressed_bytes: int = 500 * 1024 * 1024
    max_zip_ratio: float = 200.0                   # uncompressed / compressed, a zip-bomb guard
    # graphic objects after step-and-repeat expansion: a layer of this many reads in well under
    # a minute (2 000 000 took over ten; found by fuzzing)
    max_step_repeat_objects: int = 100_000
    # region contour vertices the step-and-repeat copies add: a copied pour brings all its
    # vertices (10,000 copies of a 13,000-vertex pour took 5.8 GB; found by fuzzing); a 2 x 2
    # panel of a board with 200,000 pour vertices adds 600,000
    max_step_repeat_vertices: int = 4_000_000
    max_objects_per_layer: int = 5_000_000
    # drawn lines and arcs of an outline (profile) layer, step-and-repeat copies counted: joining
    # them into faces is the slow part (40 000 took half a minute); real outlines draw hundreds
    max_profile_segments: int = 100_000


DEFAULT_LIMITS = InputLimits()
