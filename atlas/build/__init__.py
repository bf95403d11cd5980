"""The build: spectrum files -> strips, continuum, envelopes, measurements -> an atlas on disk.

| module | job |
| --- | --- |
| ``star`` | one star from file to sealed store (:func:`build_star`) and its options |
| ``pipeline`` | plan -> execute -> commit for many files (:func:`build_atlas`) |
| ``cluster`` | the dask.distributed execution |
"""

from atlas.build.pipeline import BuildPlan, BuildReport, build_atlas, expand_inputs, plan_build
from atlas.build.star import (
    CHUNK_BYTES,
    BuildOptions,
    build_star,
    build_star_safe,
    prepare,
    star_arrays,
    star_block,
    write_star_arrays,
)

__all__ = [
    "CHUNK_BYTES", "BuildOptions", "BuildPlan", "BuildReport", "build_atlas", "build_star",
    "build_star_safe", "expand_inputs", "plan_build", "prepare", "star_arrays", "star_block",
    "write_star_arrays",
]
