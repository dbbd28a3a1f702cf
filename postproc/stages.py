"""Where the design's time goes, stage by stage (`shearpost bench`).

The design steps are plain module functions called through their modules, so they can
be timed from outside without a line in them: ``instrument()`` wraps each step listed in
``STEPS`` with a clock that adds its seconds to its stage. A step that a later version
renames or removes is skipped (its time then counts as "other design"), never an error.
The clocks run only in a process that asked for them (the bench's own design, through
``engine.design_part(..., timed=True)``); a normal run never calls ``instrument()``.
"""

from __future__ import annotations

import contextlib
import functools
import importlib
import time

# (module, function, stage): the steps of a batch (postproc.pipeline) in pipeline order
STEPS = (
    ("postproc.pipeline.beams", "geometry", "geometry and stations"),
    ("postproc.pipeline.columns", "geometry", "geometry and stations"),
    ("postproc.pipeline", "resample", "geometry and stations"),
    ("postproc.combos", "candidates", "envelope (candidates)"),
    ("postproc.pipeline.frame_beams", "plan", "demand"),
    ("postproc.demand.beams", "required", "demand"),
    ("postproc.pipeline.deep", "regions", "strut-and-tie"),
    ("postproc.pipeline.deep", "check", "strut-and-tie"),
    ("postproc.pipeline.deep", "records", "strut-and-tie"),
    ("postproc.pipeline.beams", "_options", "layout"),
    ("postproc.pipeline.beams", "_layout", "layout"),
    ("postproc.pipeline.beams", "_provided", "layout"),
    ("postproc.pipeline.beams", "_check", "check"),
    ("postproc.pipeline.beams", "_records", "records"),
)
ORDER = ("ingest", "geometry and stations", "envelope (candidates)", "demand", "layout", "check", "records",
         "strut-and-tie", "columns (all steps)", "other design", "trace write", "report")

_seconds: dict[str, float] = {}
_depth = [0]  # a step called inside another timed step counts once, in the outer one


def _timed(fn, stage: str):
    @functools.wraps(fn)
    def run(*args, **kwargs):
        if _depth[0]:
            return fn(*args, **kwargs)
        _depth[0] += 1
        t = time.perf_counter()
        try:
            return fn(*args, **kwargs)
        finally:
            _seconds[stage] = _seconds.get(stage, 0.0) + time.perf_counter() - t
            _depth[0] -= 1

    run.__shearpost_stage__ = stage
    return run


def instrument() -> None:
    """Wrap every step of ``STEPS`` found in its module (once per process)."""
    for module, name, stage in STEPS:
        try:
            mod = importlib.import_module(module)
        except ImportError:
            continue
        fn = getattr(mod, name, None)
        if callable(fn) and not hasattr(fn, "__shearpost_stage__"):
            setattr(mod, name, _timed(fn, stage))
    from postproc.pipeline import columns  # the column family: its own steps, timed as a whole

    if not hasattr(columns.design, "__shearpost_stage__"):
        columns.design = _timed(columns.design, "columns (all steps)")


@contextlib.contextmanager
def clock(stage: str):
    """Add the block's seconds to ``stage``."""
    t = time.perf_counter()
    try:
        yield
    finally:
        _seconds[stage] = _seconds.get(stage, 0.0) + time.perf_counter() - t


def take() -> dict[str, float]:
    """The seconds gathered since the last call, by stage (and start again)."""
    out = dict(_seconds)
    _seconds.clear()
    return out


def merge(into: dict[str, float], more: dict[str, float]) -> dict[str, float]:
    for k, v in more.items():
        into[k] = into.get(k, 0.0) + v
    return into
