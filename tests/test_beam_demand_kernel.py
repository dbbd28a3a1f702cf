"""The beams' per-candidate demand compiled (postproc.compiled.beam_pair_demand) against its
numpy twin (postproc.demand.beams.pair_demand): the same bits. The numpy demand is the one
checked against hand values of Chapters 9 and 22 elsewhere (tests of the pipeline and of
NaN safety); this checks that the compiled path is that demand."""

from __future__ import annotations

import numpy as np
import pytest

from postproc import combos, kernels
from postproc.codes.aci318_19 import SI, US
from postproc.demand import beams as demand

FIELDS = ("vu", "nu", "tu", "vc_hi", "vc_lo", "av", "ata", "torsion", "minimum", "shear_ratio")


def _model(rng, n: int, k: int, u, torsion: bool, poison: bool):
    """n random beams (flanged or not, As given or not, shallow ones exempt by Table 9.6.3.1,
    lightweight or not) in the units of ``u``, their stations and k candidates over them."""
    to_len, to_stress = (1.0, 1.0) if u is SI else (1 / 25.4, 145.038)
    b, h = rng.uniform(200.0, 600.0, n), rng.choice([220.0, 240.0, 450.0, 600.0, 900.0], n)
    flanged = rng.random(n) < 0.3
    cols = dict(b=b, h=h, d=h - rng.uniform(40.0, 90.0, n), fc=rng.uniform(20.0, 90.0, n), fyt=rng.uniform(280.0, 550.0, n),
                lam=rng.choice([1.0, 0.75], n), fy=np.full(n, 420.0),
                As=np.where(rng.random(n) < 0.5, rng.uniform(300.0, 6000.0, n), np.nan),
                bf=np.where(flanged, b + rng.uniform(200.0, 1500.0, n), np.nan), hf=np.where(flanged, 120.0, np.nan))
    if poison:
        for arr in cols.values():
            hit = rng.random(n) < 0.03
            arr[hit] = rng.choice([np.nan, np.inf, -np.inf, 0.0, -0.0, -1.0], hit.sum())
    for key in ("b", "h", "d", "bf", "hf"):
        cols[key] = cols[key] * to_len
    for key in ("fc", "fyt", "fy"):
        cols[key] = cols[key] * to_stress
    cols["As"] = cols["As"] * to_len**2
    sec = demand.section_from_members(**cols, u=u)
    per_member = rng.integers(3, 12, n)
    st_member = np.repeat(np.arange(n), per_member)  # stations of each member in turn
    station = np.sort(rng.integers(0, len(st_member), k))
    force = 1.0 if u is SI else 1 / 4448.22
    values = {"V": rng.uniform(-6e5, 6e5, k) * rng.choice([0.0, 0.05, 1.0], k) * force,
              "N": rng.uniform(-1e6, 3e5, k) * rng.choice([0.0, 1.0], k) * force,
              "T": (rng.uniform(-8e7, 8e7, k) * rng.choice([0.0, 0.01, 1.0], k) if torsion else np.zeros(k)) * force}
    if poison:
        for arr in values.values():
            hit = rng.random(k) < 0.02
            arr[hit] = rng.choice([np.nan, np.inf, -np.inf, 0.0, -0.0], hit.sum())
    cand = combos.Candidates(station=station, row=np.zeros(k, np.int64), choice_at=np.zeros(k, np.int64),
                             choices=np.zeros((1, 0), np.int64), values=values,
                             bounds=np.searchsorted(station, np.arange(len(st_member) + 1)))
    vc_zero = rng.random(len(st_member)) < 0.1
    return sec.take(st_member), cand, vc_zero


def _same(a: np.ndarray, b: np.ndarray, nan_sign_free: bool) -> bool:
    """The same bits; with poisoned inputs a NaN may come out with the other sign bit (where two
    NaNs of opposite signs meet, which one an operation passes on is the compiler's choice)."""
    if not nan_sign_free or a.dtype != np.float64:
        return a.tobytes() == b.tobytes()
    nan = np.isnan(a)
    return bool(np.array_equal(nan, np.isnan(b)) and a[~nan].tobytes() == b[~nan].tobytes())


@pytest.mark.parametrize("seed,u,torsion,poison", [(1, SI, False, False), (2, SI, True, False), (3, US, True, False),
                                                   (4, SI, True, True), (5, US, True, True)])
def test_compiled_beam_demand_is_the_numpy_demand(monkeypatch, seed, u, torsion, poison):
    if not kernels.available():
        pytest.skip("numba is not installed (pip install 'shearpost[compiled]')")
    calls = []
    kernel = kernels.beam_pair_demand
    monkeypatch.setattr(kernels, "beam_pair_demand", lambda *a: (calls.append(1), kernel(*a))[1])
    rng = np.random.default_rng(seed)
    with np.errstate(all="ignore"):  # the poisoned sections' own arithmetic
        sec, cand, vc_zero = _model(rng, 400, 50_000, u, torsion, poison)
    got = {}
    for how in ("numpy", "compiled"):
        monkeypatch.setenv(kernels.ENV, how)
        with np.errstate(all="ignore"):
            got[how] = (demand.pair_demand(sec, cand, vc_zero), demand.pair_demand(sec, cand))
    for numpy_pairs, compiled_pairs in zip(got["numpy"], got["compiled"]):
        for f in FIELDS:
            assert _same(getattr(compiled_pairs, f), getattr(numpy_pairs, f), poison), f
    assert len(calls) == 2
    if not poison:  # the random beams reach every branch
        p = got["numpy"][0]
        assert p.minimum.any() and (~p.minimum).any() and (p.av > 0).any() and (p.vc_hi == 0).any()
        assert (p.vc_lo < p.vc_hi).any() and (torsion == p.torsion.any())
