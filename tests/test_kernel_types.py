"""The kernels' wrappers hand numba one type per argument, whatever the caller passes.

A read-only array (a broadcast view, an Arrow buffer) or a strided one is another type to
numba: a call with one loads, or compiles, machine code of its own in every worker process,
instead of the code the fork server loaded once (``kernels.warm``). Here every wrapper is
called with read-only and strided inputs, and no kernel may gain a specialization."""

from __future__ import annotations

import numpy as np
import pytest

from postproc import kernels

pytest.importorskip("numba", reason="the compiled kernels need numba (the extra 'compiled')")


def _frozen(a) -> np.ndarray:
    """A read-only view of ``a`` (what np.broadcast_to gives)."""
    a = np.asarray(a)
    return np.broadcast_to(a, a.shape)


def _strided(a) -> np.ndarray:
    """``a`` as a view with a stride of two elements (a strided, 'A' layout array to numba)."""
    a = np.asarray(a)
    wide = np.repeat(a, 2, axis=0)
    return wide[::2]


def _signatures(compiled) -> dict[str, int]:
    return {n: len(f.signatures) for n in dir(compiled) if hasattr(f := getattr(compiled, n), "signatures")}


def test_read_only_and_strided_inputs_reuse_the_warmed_code(monkeypatch):
    monkeypatch.setenv(kernels.ENV, "compiled")
    kernels.warm()
    from postproc import compiled

    before = _signatures(compiled)
    one, zero_i, no = np.ones(3), np.zeros(3, np.int64), np.zeros(3, bool)
    kernels.combine_at(_frozen(np.ones((2, 2))), _frozen(np.ones((2, 3))), _strided(zero_i), _strided(zero_i))
    kernels.beam_pair_demand(_strided(zero_i), _frozen(one), _strided(one), _frozen(no), _strided(no),
                             {k: _frozen(no if k == "exempt" else one) for k in kernels.BEAM_DEMAND_TERMS}, 0.75)
    kernels.lateral_check(_frozen(zero_i), _strided(one), _frozen(one), _frozen(one), _strided(one),
                          {k: np.broadcast_to(1.0, 3) for k in kernels.LATERAL_TERMS}, 0.75, 1e-9)
    kernels.tie_bisection(_frozen(one), _strided(one), 1.0, _frozen(one), _strided(no), _frozen(one),
                          [(np.broadcast_to(1.0, 3),) * 7] * 2, 0.75, 1.0, 1)
    square = _frozen(np.ones((3, 1)))
    kernels.axial_bisection(_strided(one), square * 0, square, square, square, square, square, _frozen(one),
                            _strided(one), 1.0, _frozen(one), _strided(one), 1)
    kernels.front(_frozen(np.zeros((2, 1, 3))), _frozen(np.ones((1, 2))), _frozen(np.ones((1, 3), bool)))
    kernels.dense_front(_frozen(np.zeros((3, 2))), [_frozen(np.zeros((1, 2)))], _frozen(np.ones((1, 1))))
    assert _signatures(compiled) == before
