"""The batch pipeline: the steps every member family goes through, and the shared ones.

A batch is a set of whole members of one family with their force rows. Its design is a
short pipeline of named steps, each a function of typed arrays over all stations of all
members of the batch (struct of arrays):

    geometry -> resample (station grid, end rules) -> candidates -> demand -> layout
             -> check -> records

``resample`` and the combination candidates are shared; each family (postproc.pipeline.
beams, ...) supplies its own geometry, demand, layout, check and records, and the
statuses and messages of its members.

Units: a batch is in the run's internal units (N, mm, MPa; or lb, in, psi: ``settings.units``,
postproc.units), and the code provisions are evaluated with that unit system's edition
(``edition(settings)``). Records (members.csv and zones.csv rows, the station trace) are
keyed by the SI spelling of each column (MEMBER_COLUMNS, ZONE_COLUMNS) with values in the
run's units (kN or kip, kN*m or kip*ft, mm or in, kg or lb); the engine names the tables
in the run's unit system (``vu_design_i_kip``, ``spacing_in``) when it writes them.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pac

from postproc import combos as combos_mod
from postproc import stations, units
from postproc.codes import aci318_19 as aci
from postproc.settings import Settings

MEMBER_COLUMNS = ["member", "status", "message", "governing_case", "vu_design_i_kN", "vu_design_j_kN",
                  "crit_i", "crit_j", "phi_vc_kN", "phi_vn_limit_kN", "utilization", "stirrups_total",
                  "stirrup_mass_kg",
                  # added after the first release, at the end (the table's columns are a contract)
                  "x_governing_mm", "vu_kN", "nu_kN", "tu_kNm", "vc_equation", "al_torsion_mm2",
                  # deep beams and D-regions (strut-and-tie, Ch. 23): which method designed the member, the
                  # bottom tie's steel (As required, the bars), the horizontal web bars (9.9.3.1(b))
                  "method", "tie_as_req_mm2", "tie_bars", "web_bars",
                  # shear parallel to b (Vb_kN) and capacity design (columns)
                  "vb_design_i_kN", "vb_design_j_kN", "vb_kN", "utilization_v", "utilization_vb", "phi_vc_vb_kN",
                  "phi_vn_limit_vb_kN", "ve_v_kN", "ve_vb_kN", "lo_mm"]
ZONE_COLUMNS = ["member", "zone", "start_mm", "end_mm", "bar", "legs", "spacing_mm", "count",
                # added after the first release, at the end: stirrup, hoop (beams); tie, hoop, spiral (columns);
                # a column's legs parallel to b (legs: parallel to h)
                "kind", "legs_vb"]


class SelfCheckError(AssertionError):
    """A finished layout failed its own check: a defect in shearpost, never a design result."""


def edition(settings: Settings) -> aci.Edition:
    """The edition of ACI 318-19 a run is designed with: that of its unit system."""
    return aci.edition(settings.units)


def unit_system(settings: Settings) -> units.UnitSystem:
    return units.system(settings.units)


def row(member, status, message, **kw) -> dict:
    row = {c: None for c in MEMBER_COLUMNS}
    row.update(member=member, status=status, message=message, stirrups_total=0, stirrup_mass_kg=0.0)
    row.update(kw)
    return row


@dataclass(frozen=True)
class BatchInput:
    members: pd.DataFrame  # members of the batch, all of one family (inputs, the run's column names)
    f_member: np.ndarray  # per force row: index into beams
    f_case: np.ndarray  # per force row: index into cset.cases
    f_x: np.ndarray  # from node i, mm or in
    f_values: dict[str, np.ndarray]  # V, N (N or lb), T (N*mm or lb*in)


@dataclass(frozen=True)
class MemberGeometry:
    """Per-member arrays every family gives the shared steps."""

    names: np.ndarray
    geo: stations.Geometry


@dataclass(frozen=True)
class Resampled:
    """Steps 2 and 3: the station grid, every case at every station, and the end rules."""

    samples: stations.Samples
    grid: stations.Grid
    x_clear: np.ndarray  # station position from face i
    case_values: dict[str, np.ndarray]  # (n_cases, S) at the station each station takes its forces from
    rules: stations.EndRules
    warnings: list[str]
    at_station: dict[str, np.ndarray] | None = None  # (n_cases, S) at each station itself (no 9.4.3.2 rule)
    notes: dict[int, list[str]] = field(default_factory=dict)  # per member: what its message must say of its forces
    partial: set[int] = field(default_factory=set)  # members whose forces do not cover the clear span (invalid)


def resample(mb: MemberGeometry, bi: BatchInput, cset: combos_mod.ComboSet, settings: Settings) -> Resampled:
    g, n, names = mb.geo, len(mb.names), mb.names
    U = unit_system(settings)
    samples = stations.Samples.build(bi.f_member, bi.f_case, bi.f_x, bi.f_values, settings.stations.tolerance)
    grid = stations.build_grid(g, samples, settings.stations)
    span = float(g.length.max() * 2 + 1e3)
    case_vals, missing = stations.interpolate(samples, len(cset.cases), grid.member, grid.x, grid.side, span)
    rules = stations.end_rules(g, grid, samples, settings.stations)
    at_station = case_vals
    case_vals = {k: v[:, rules.source] for k, v in case_vals.items()}
    finite = np.all([np.isfinite(v).all(axis=0) for v in case_vals.values()], axis=0)
    if not finite.all():  # validated inputs never give one: a defect, stopped as a failed self-check is
        k = np.flatnonzero(~finite)[0]
        raise SelfCheckError(f"member {names[grid.member[k]]}: a design force is not finite at x = {grid.x[k]:.0f} mm")

    warnings: list[str] = []
    notes: dict[int, list[str]] = {}

    def note(m, text: str) -> None:  # a run warning, and the member's message says it too
        warnings.append(f"member {names[m]}: {text}")
        notes.setdefault(int(m), []).append(text)

    for m in np.unique(grid.member[missing.any(axis=0)]):
        lacking = [cset.cases[c] for c in np.flatnonzero(missing[:, grid.member == m].any(axis=1))]
        note(m, f"no rows for case(s) {', '.join(lacking)}; taken as zero")
    dm, dc = stations.doubled(samples)
    for m in np.unique(dm):
        note(m, f"two rows at every station in case(s) {', '.join(cset.cases[c] for c in dc[dm == m])} (a table "
                "given twice, e.g. two exports joined?): read as a concentrated load at each station; check the forces")
    partial_members: set[int] = set()  # members whose rows of some case stop short of the clear span: not designed
    first = np.flatnonzero(np.r_[True, (samples.member[1:] != samples.member[:-1]) | (samples.case[1:] != samples.case[:-1])])
    sm, sc = samples.member[first], samples.case[first]  # each member's cases in turn (Samples are sorted so)
    x_lo, x_hi = np.minimum.reduceat(samples.x, first), np.maximum.reduceat(samples.x, first)
    slack = settings.stations.coverage_slack  # rounding of exported stations
    partial = (x_lo > g.start[sm] + slack) | (x_hi < g.end[sm] - slack)
    at = lambda x: f"{x / U.per_span:.3f}"  # noqa: E731
    for m in np.unique(sm[partial]):
        spans: dict[str, list[str]] = {}  # the cases of each range of rows
        for j in np.flatnonzero(partial & (sm == m)):
            spans.setdefault(f"x = {at(x_lo[j])} to {at(x_hi[j])} {U.span}", []).append(cset.cases[sc[j]])
        cases = "; ".join(f"case(s) {', '.join(c)}: {rng}" for rng, c in spans.items())
        note(m, f"the forces cover only part of the clear span x = {at(g.start[m])} to {at(g.end[m])} {U.span} "
                f"({cases}): not designed, the values past the last row would be guesses; give rows over the whole member")
        partial_members.add(int(m))
    sm, sc, sx, sdv = stations.steep_slopes(samples, settings.stations, n)
    for m in np.unique(sm):
        k = np.flatnonzero(sm == m)
        slope = settings.stations.steep_slope * U.per_span / U.per_force
        warnings.append(f"member {names[m]}, case {cset.cases[sc[k[0]]]}: V changes by "
                        f"{abs(sdv[k[0]]) / U.per_force:,.1f} {U.force} from x = {sx[k[0]] / U.per_span:.4f} {U.span} "
                        f"to the next row, steeper than {slope:g} {U.force}/{U.span}"
                        + (f" (and {len(k) - 1} more places)" if len(k) > 1 else "")
                        + ": a concentrated load spread by the export? It is designed as a steep linear change; "
                          "give the two rows one station to make it a concentrated load")
    return Resampled(samples, grid, grid.x - g.start[grid.member], case_vals, rules, warnings, at_station, notes,
                     partial_members)


def governing(values: np.ndarray, tie: np.ndarray | None, bounds: np.ndarray) -> np.ndarray:
    """Index of the largest value within each segment, ties (to 1e-9) broken by the largest
    ``tie`` (None: none), then by the first in order. Segments must not be empty. The
    order is lexicographic, so the winner of segments grouped into larger ones is the
    winner among their winners (``governing(v[w], t[w], groups)`` for w the winners)."""
    seg = np.repeat(np.arange(len(bounds) - 1), np.diff(bounds))
    starts = bounds[:-1]
    v = np.round(values, 9)
    best = v == np.maximum.reduceat(v, starts)[seg]
    if tie is not None:
        t = np.where(best, np.round(tie, 9), -np.inf)
        best &= t == np.maximum.reduceat(t, starts)[seg]
    first = np.where(best, -np.arange(len(v)), -len(v))
    return -np.maximum.reduceat(first, starts)


@dataclass(frozen=True)
class BatchOutput:
    rows: list[dict]  # members.csv rows
    zones: list[dict]  # zones.csv rows
    trace: pa.Table  # the station trace
    warnings: list[str]
    stirrups: pd.DataFrame  # member, x_mm (mm or in, from face i)
    tables: dict[str, pd.DataFrame] = field(default_factory=dict)  # a family's own tables (strut-and-tie models)


def design_batch(family, bi: BatchInput, cset: combos_mod.ComboSet, settings: Settings) -> BatchOutput:
    """One batch of members of one family through the pipeline."""
    mb = family.geometry(bi.members, settings)
    rs = resample(mb, bi, cset, settings)
    cand = combos_mod.candidates(cset, rs.case_values, signed=family.signed)
    out = with_notes(family.design(mb, rs, cand, cset, settings), {mb.names[m]: t for m, t in rs.notes.items()})
    return without_partial(out, {mb.names[m]: "; ".join(rs.notes[m]) for m in rs.partial})


def without_partial(out: BatchOutput, partial: dict[str, str]) -> BatchOutput:
    """Members whose forces cover only part of the clear span (``partial``: member -> its
    message) reported ``invalid``, their zones, stirrups, station trace and tables left out:
    what their design would give past the last row of a case is not known."""
    if not partial:
        return out
    gone = pa.array(list(partial), pa.string())
    keep = lambda df: df[~df["member"].isin(list(partial))] if "member" in df else df  # noqa: E731
    return BatchOutput(
        rows=[row(r["member"], "invalid", partial[r["member"]]) if r["member"] in partial else r for r in out.rows],
        zones=[z for z in out.zones if z["member"] not in partial],
        trace=out.trace.filter(pac.invert(pac.is_in(out.trace["member"], value_set=gone))),
        warnings=out.warnings, stirrups=keep(out.stirrups), tables={k: keep(v) for k, v in out.tables.items()})


def with_notes(out: BatchOutput, notes: dict[str, list[str]]) -> BatchOutput:
    """Each member's notes on its forces joined to its members.csv message (in place)."""
    if notes:
        for r in out.rows:
            said = notes.get(r["member"])
            if said:
                r["message"] = "; ".join([r["message"], *said] if r["message"] else said)
    return out
