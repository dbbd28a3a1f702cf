"""Design a stored run: members in batches through combos, stations, design and detailing.

The whole batch moves as arrays; only the zone layout is built per member (from that
member's station arrays). Every member of the input leaves with a status.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pac
import pyarrow.parquet as pq

from postproc import combos as combos_mod
from postproc import detailing, stations
from postproc.demand import beams as demand
from postproc.codes import aci318_19 as aci
from postproc.settings import BAR_CATALOGUE, Settings
from postproc.store import Run
from postproc.terms import STATUSES  # noqa: F401  (engine.STATUSES: every member leaves with one)

MEMBER_COLUMNS = ["member", "status", "message", "governing_case", "vu_design_i_kN", "vu_design_j_kN",
                  "crit_i", "crit_j", "phi_vc_kN", "phi_vn_limit_kN", "utilization", "stirrups_total",
                  "stirrup_mass_kg",
                  # added after the first release, at the end (the table's columns are a contract)
                  "x_governing_mm", "vu_kN", "nu_kN", "tu_kNm", "vc_equation", "al_torsion_mm2"]
ZONE_COLUMNS = ["member", "zone", "start_mm", "end_mm", "bar", "legs", "spacing_mm", "count"]
BATCH_CELLS = 500_000  # combinations x stations per batch: bounds memory (and stays in cache), not results


class SelfCheckError(AssertionError):
    """A finished layout failed its own check: a defect in shearpost, never a design result."""


@dataclass
class Result:
    members: pd.DataFrame
    zones: pd.DataFrame
    combos: combos_mod.ComboSet
    warnings: list[str] = field(default_factory=list)
    stirrups: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(columns=["member", "x_mm"]))


def combination_set(run: Run, case_names: list[str], settings: Settings) -> tuple[combos_mod.ComboSet, list[str]]:
    cases = run.cases()
    if cases is None:
        return combos_mod.prefactored(case_names), []
    types = dict(zip(cases.column("case").to_pylist(), cases.column("type").to_pylist()))
    patterns = {}
    if "pattern" in cases.column_names:
        patterns = dict(zip(cases.column("case").to_pylist(), cases.column("pattern").fill_null("").to_pylist()))
    unused = sorted(set(types) - set(case_names))
    warnings = [f"cases.csv lists case '{c}', which has no rows in forces.csv" for c in unused]
    return combos_mod.aci_5_3_1(types, case_names, settings.combinations, patterns), warnings


@dataclass
class PartResult:
    rows: list[dict]
    zones: list[dict]
    warnings: list[str]
    members: set[str]  # every member id found in the part's forces
    stirrups: pd.DataFrame  # member, x_mm: every stirrup's position from face i


def design_run(run: Run, settings: Settings, stations_dir: Path | None = None, map_parts=map,
               progress=None) -> Result:
    """Design every member of a stored run, part by part (each part holds whole members).

    ``map_parts(fn, parts)`` runs the parts (the built-in map, or a distributed engine's);
    each part's station trace is written to ``stations_dir`` as it arrives, so memory is
    bounded by the part size.
    """
    members = run.members().to_pandas()
    input_order = {m: k for k, m in enumerate(members["member"])}
    cset, warnings = combination_set(run, run.manifest()["cases"], settings)
    rows: list[dict] = []
    reason = members["invalid_reason"] if "invalid_reason" in members else pd.Series(None, index=members.index)
    invalid = reason.notna() & (reason != "")
    for m, why in zip(members.loc[invalid, "member"], reason[invalid]):
        rows.append(_row(m, "invalid", why))
    members = members[~invalid]
    is_column = members["kind"] == "column"
    for m in members.loc[is_column, "member"]:
        rows.append(_row(m, "not-covered", "column shear design is not covered yet"))
    beams = members[~is_column].sort_values("member").reset_index(drop=True)

    zones: list[dict] = []
    stirrups: list[pd.DataFrame] = []
    seen: set[str] = set()
    if stations_dir is not None:
        stations_dir.mkdir(exist_ok=True)
    task = functools.partial(design_part, beams=beams, cset=cset, settings=settings,
                             stations_dir=None if stations_dir is None else str(stations_dir))
    for part in map_parts(task, [str(p) for p in run.force_parts()]):
        rows.extend(part.rows)
        zones.extend(part.zones)
        warnings.extend(part.warnings)
        seen |= part.members
        stirrups.append(part.stirrups)
        if progress:
            progress(1)
    for m in sorted(seen - set(input_order)):
        rows.append(_row(m, "no-geometry", "forces given but no row in the members table"))
    for m in beams["member"][~beams["member"].isin(seen)]:
        rows.append(_row(m, "no-forces", "no rows in the forces table"))

    out = pd.DataFrame(rows, columns=MEMBER_COLUMNS)
    out["_o"] = out["member"].map(lambda m: input_order.get(m, len(input_order)))
    out = out.sort_values(["_o", "member"]).drop(columns="_o").reset_index(drop=True)
    zdf = pd.DataFrame(zones, columns=ZONE_COLUMNS)
    zdf = zdf.assign(_o=zdf["member"].map(input_order)).sort_values(["_o", "zone"], kind="stable").drop(columns="_o")
    positions = pd.concat(stirrups, ignore_index=True) if stirrups else pd.DataFrame(columns=["member", "x_mm"])
    return Result(out, zdf.reset_index(drop=True), cset, warnings, positions)


def design_part(part_path: str, beams: pd.DataFrame, cset: combos_mod.ComboSet, settings: Settings,
                stations_dir: str | None = None) -> PartResult:
    """Design the beams whose forces are in one stored part (a pure function of its inputs,
    so that any engine may run the parts in any order or place). The part's station trace
    is written to ``stations_dir`` under the part's own file name, by the worker itself."""
    forces = pq.read_table(part_path, columns=["member", "case", "x_m", "V_kN", "N_kN", "T_kNm"])
    member_col = forces.column("member").combine_chunks()
    seen = set(pac.unique(member_col).to_pylist())
    beams = beams[beams["member"].isin(seen)].reset_index(drop=True)
    names = pa.array(beams["member"].tolist(), pa.string())
    f_member = pac.index_in(member_col, value_set=names).fill_null(-1).to_numpy().astype(np.int64)
    sel = np.flatnonzero(f_member >= 0)
    f_member = f_member[sel]
    cidx = pac.index_in(forces.column("case").combine_chunks(), value_set=pa.array(cset.cases)).to_numpy()
    cidx = cidx[sel].astype(np.int64)
    x = forces.column("x_m").to_numpy()[sel] * 1e3
    values = {"V": forces.column("V_kN").to_numpy()[sel] * 1e3, "N": forces.column("N_kN").to_numpy()[sel] * 1e3,
              "T": forces.column("T_kNm").to_numpy()[sel] * 1e6}
    if np.any(np.diff(f_member) < 0):  # parts are sorted by member id; keep any other source safe
        order = np.argsort(f_member, kind="stable")
        f_member, x, cidx = f_member[order], x[order], cidx[order]
        values = {k: v[order] for k, v in values.items()}
    bounds = np.searchsorted(f_member, np.arange(len(beams) + 1))

    rows, zones, st_tables, warnings, stirrups = [], [], [], [], []
    d = beams["d_mm"].to_numpy()
    clear = beams["length_m"].to_numpy() * 1e3 - beams["face_i_mm"].to_numpy() - beams["face_j_mm"].to_numpy()
    est = (clear / np.minimum(settings.stations.max_step_mm, d / settings.stations.steps_per_d) + 8) \
        * max(2 * len(cset.rows), len(cset.cases))
    start = 0
    while start < len(beams):
        stop = start + max(1, int(np.searchsorted(np.cumsum(est[start:]), BATCH_CELLS)))
        r0, r1 = bounds[start], bounds[stop]
        batch = BatchInput(beams.iloc[start:stop].reset_index(drop=True), f_member[r0:r1] - start, cidx[r0:r1],
                           x[r0:r1], {k: v[r0:r1] for k, v in values.items()})
        res = _design_batch(batch, cset, settings)
        rows.extend(res[0])
        zones.extend(res[1])
        st_tables.append(res[2])
        warnings.extend(res[3])
        stirrups.append(res[4])
        start = stop
    if stations_dir is not None and st_tables:
        pq.write_table(pa.concat_tables(st_tables), Path(stations_dir) / Path(part_path).name)
    positions = pd.concat(stirrups, ignore_index=True) if stirrups else pd.DataFrame(columns=["member", "x_mm"])
    return PartResult(rows, zones, warnings, seen, positions)


def _row(member, status, message, **kw) -> dict:
    row = {c: None for c in MEMBER_COLUMNS}
    row.update(member=member, status=status, message=message, stirrups_total=0, stirrup_mass_kg=0.0)
    row.update(kw)
    return row


# ----------------------------------------------------------------------------- the batch pipeline
#
# geometry -> resample -> end rules -> demand -> layout -> check -> records: each step a
# function of typed arrays over all stations of all members of the batch.


@dataclass(frozen=True)
class BatchInput:
    beams: pd.DataFrame  # members of the batch (inputs, SI)
    f_member: np.ndarray  # per force row: index into beams
    f_case: np.ndarray  # per force row: index into cset.cases
    f_x: np.ndarray  # mm from node i
    f_values: dict[str, np.ndarray]  # V, N (N), T (N*mm)


@dataclass(frozen=True)
class Members:
    """Step 1, geometry: per-member arrays."""

    names: np.ndarray
    geo: stations.Geometry
    sec: demand.Section
    free_i: np.ndarray
    free_j: np.ndarray


@dataclass(frozen=True)
class Resampled:
    """Steps 2 and 3: the station grid, every case at every station, and the end rules."""

    samples: stations.Samples
    grid: stations.Grid
    x_clear: np.ndarray  # station position from face i
    case_values: dict[str, np.ndarray]  # (n_cases, S) at the station each station takes its forces from
    rules: stations.EndRules
    warnings: list[str]


@dataclass(frozen=True)
class Options:
    """The ladder's (bar, legs) choices, per member: legs, bar area, Aoh, ph."""

    bars: list[str]
    legs: np.ndarray  # (K, members)
    area: np.ndarray  # (K,)
    db: np.ndarray  # (K,)
    Aoh: np.ndarray  # (K, members)
    ph: np.ndarray  # (K, members)


@dataclass(frozen=True)
class Layouts:
    """Step 5: the chosen option and stirrup positions of each member that has one."""

    option: np.ndarray  # per member: ladder index, -1 where not laid out
    layouts: dict[int, detailing.Layout]
    reasons: dict[int, tuple[str, str]]  # member -> (status, message) where not designed
    stirrups_here: np.ndarray  # per station: stirrups are placed there (needed, or throughout)
    allowed: np.ndarray  # per station: the allowed spacing for the chosen option (inf: none needed)


def _geometry(bm: pd.DataFrame) -> Members:
    g = stations.Geometry(
        length=bm["length_m"].to_numpy() * 1e3, face_i=bm["face_i_mm"].to_numpy(), face_j=bm["face_j_mm"].to_numpy(),
        d=bm["d_mm"].to_numpy(), h=bm["h_mm"].to_numpy(), support_i=bm["support_i"].to_numpy(object),
        support_j=bm["support_j"].to_numpy(object), load_top=(bm["load_face"] == "top").to_numpy())
    sec = demand.section_from_members(
        b=bm["b_mm"].to_numpy(float), h=g.h, d=g.d, fc=bm["fc_mpa"].to_numpy(), fyt=bm["fyt_mpa"].to_numpy(),
        lam=bm["lambda"].to_numpy(), fy=bm["fy_mpa"].to_numpy(), As=bm["as_tension_mm2"].to_numpy(float),
        bf=bm["bf_mm"].to_numpy(float), hf=bm["hf_mm"].to_numpy(float))
    return Members(bm["member"].to_numpy(object), g, sec, g.support_i == "free", g.support_j == "free")


def _resample(mb: Members, bi: BatchInput, cset: combos_mod.ComboSet, settings: Settings) -> Resampled:
    g, n, names = mb.geo, len(mb.names), mb.names
    samples = stations.Samples.build(bi.f_member, bi.f_case, bi.f_x, bi.f_values, settings.stations.tolerance_mm)
    grid = stations.build_grid(g, samples, settings.stations)
    span = float(g.length.max() * 2 + 1e3)
    case_vals, missing = stations.interpolate(samples, len(cset.cases), grid.member, grid.x, grid.side, span)
    rules = stations.end_rules(g, grid, samples, settings.stations)
    case_vals = {k: v[:, rules.source] for k, v in case_vals.items()}

    warnings = []
    for m in np.unique(grid.member[missing.any(axis=0)]):
        lacking = [cset.cases[c] for c in np.flatnonzero(missing[:, grid.member == m].any(axis=1))]
        warnings.append(f"member {names[m]}: no rows for case(s) {', '.join(lacking)}; taken as zero")
    first_row = np.searchsorted(samples.member, np.arange(n))
    x_lo = np.minimum.reduceat(samples.x, first_row)
    x_hi = np.maximum.reduceat(samples.x, first_row)
    short = (x_lo > g.start + 10.0) | (x_hi < g.end - 10.0)  # 10 mm: rounding of exported stations
    for m in np.flatnonzero(short):
        warnings.append(f"member {names[m]}: forces cover x = {x_lo[m] / 1e3:.3f} to {x_hi[m] / 1e3:.3f} m only; "
                        "the end values are held over the rest of the clear span")
    sm, sc, sx, sdv = stations.steep_slopes(samples, settings.stations, n)
    for m in np.unique(sm):
        k = np.flatnonzero(sm == m)
        warnings.append(f"member {names[m]}, case {cset.cases[sc[k[0]]]}: V changes by {abs(sdv[k[0]]) / 1e3:,.1f} kN "
                        f"within {settings.stations.steep_slope_kN_per_m:g} kN/m at x = {sx[k[0]] / 1e3:.4f} m"
                        + (f" (and {len(k) - 1} more places)" if len(k) > 1 else "")
                        + ": a concentrated load spread by the export? It is designed as a steep linear change; "
                          "give the two rows one station to make it a concentrated load")
    return Resampled(samples, grid, grid.x - g.start[grid.member], case_vals, rules, warnings)


def _options(mb: Members, dem: demand.Demand, grid: stations.Grid, st) -> Options:
    """Every ladder choice for every member: legs enough for the spacing across the width
    (Table 9.7.6.2.2) where stirrups are needed, and the torsion geometry of that bar."""
    here = dem.stirrups_needed | st.stirrups_throughout
    across = np.full(len(mb.names), np.inf)
    np.minimum.at(across, grid.member[here], dem.s_max_across[here])
    bars = [bar for bar, _ in st.ladder]
    db = np.array([BAR_CATALOGUE[b][0] for b in bars])
    legs = np.array([[max(base, detailing.legs_for_width(b, st.clear_cover_mm, dbk, a)) if np.isfinite(a) else base
                      for b, a in zip(mb.sec.b, across)] for (_, base), dbk in zip(st.ladder, db)], dtype=float)
    geo = [demand.torsion_geometry(mb.sec.b, mb.sec.h, st.clear_cover_mm, dbk) for dbk in db]
    return Options(bars, legs, np.array([BAR_CATALOGUE[b][1] for b in bars]), db,
                   np.array([a for a, _ in geo]), np.array([p for _, p in geo]))


def _allowed_spacing(k: int, opt: Options, dem: demand.Demand, cand, grid: stations.Grid, here, module) -> np.ndarray:
    """Per station, the largest spacing on the module that option k admits (inf: none needed):
    strength per outer leg (22.5.8.5.3, 22.7.6.1), the minimum of 9.6.3.4 / 9.6.4.2, s_max
    (9.7.6.2.2; ph/8 and 300 mm with torsion, 9.7.6.3.3)."""
    mem = grid.member
    legs, area = opt.legs[k][mem], opt.area[k]
    need = demand.per_leg_need(cand, dem, legs, opt.Aoh[k][mem])
    with np.errstate(divide="ignore"):
        s = np.where(need > 0, area / need, np.inf)
        s = np.where(dem.minimum, np.minimum(s, legs * area / dem.av_min_s), s)
    s_max = np.where(dem.torsion, np.minimum(dem.s_max, aci.torsion_max_spacing(opt.ph[k][mem])), dem.s_max)
    s = np.where(here | (need > 0), np.minimum(s, s_max), np.inf)
    return detailing.floor_to_module(s, module)


def _layout(mb: Members, rs: Resampled, cand, dem: demand.Demand, opt: Options, deep: np.ndarray,
            settings: Settings) -> Layouts:
    """Step 5: the first ladder option that fits the minimum spacing and the torsion section
    limit (22.7.7.1, with that bar's Aoh and ph), then the stirrup positions of each member."""
    st, grid, n = settings.detailing, rs.grid, len(mb.names)
    here = dem.stirrups_needed | st.stirrups_throughout
    shear_bad = np.zeros(n, bool)
    np.logical_or.at(shear_bad, grid.member, dem.shear_ratio > 1.0)
    starts = grid.offsets[:-1]
    allowed = np.full((len(opt.bars), len(grid.x)), np.inf)
    fits = np.zeros((len(opt.bars), n), bool)
    torsion_ok = np.ones((len(opt.bars), n), bool)
    for k in range(len(opt.bars)):
        allowed[k] = _allowed_spacing(k, opt, dem, cand, grid, here, st.spacing_module_mm)
        fits[k] = np.minimum.reduceat(allowed[k], starts) >= st.min_spacing_mm
        ratio = demand.torsion_limit_ratio(mb.sec.take(grid.member), cand, dem, opt.Aoh[k][grid.member],
                                           opt.ph[k][grid.member])
        torsion_ok[k] = np.maximum.reduceat(ratio, starts) <= 1.0
    usable = fits & torsion_ok
    option = np.where(usable.any(axis=0), np.argmax(usable, axis=0), -1)
    layouts, reasons = {}, {}
    chosen = np.full(len(grid.x), np.inf)
    for m in range(n):
        if deep[m] or shear_bad[m]:
            option[m] = -1
            continue
        sl = slice(grid.offsets[m], grid.offsets[m + 1])
        k = option[m]
        if k < 0:
            if not torsion_ok[:, m].any():
                reasons[m] = ("resize", _torsion_message(mb, rs, cand, dem, opt, m))
            else:
                tight = [f"{opt.bars[j]} x{int(opt.legs[j][m])} legs at {allowed[j][sl].min():g} mm"
                         for j in range(len(opt.bars)) if torsion_ok[j, m]]
                reasons[m] = ("resize", f"no (bar, legs) of the ladder works at the {st.min_spacing_mm:g} mm minimum "
                                        f"spacing: {'; '.join(tight)}")
            continue
        got = detailing.layout_positions(rs.x_clear[sl], allowed[k][sl], float(mb.geo.clear_span[m]),
                                         bool(mb.free_i[m]), bool(mb.free_j[m]), st)
        if isinstance(got, str):
            option[m] = -1
            reasons[m] = ("resize", got)
            continue
        positions, empty, note = got
        layouts[m] = detailing.Layout(opt.bars[k], int(opt.legs[k][m]), positions, empty, note)
        chosen[sl] = allowed[k][sl]
    return Layouts(option, layouts, reasons, here, chosen)


def _torsion_message(mb, rs, cand, dem, opt, m) -> str:
    sl = slice(rs.grid.offsets[m], rs.grid.offsets[m + 1])
    best = int(np.argmax(opt.Aoh[:, m]))
    ratio = demand.torsion_limit_ratio(mb.sec.take(rs.grid.member), cand, dem, opt.Aoh[best][rs.grid.member],
                                       opt.ph[best][rs.grid.member])[sl].max()
    return (f"Vu and Tu exceed the cross-sectional limit of 22.7.7.1(a) (ratio {ratio:.2f} with {opt.bars[best]} "
            "stirrups): enlarge the section (the limit grows with bw*d and with Aoh^2/ph) or raise f'c; "
            "more stirrups do not help")


@dataclass(frozen=True)
class Provided:
    """Per station, what the layout provides (designed members only; elsewhere inf / 0)."""

    on: np.ndarray  # the station belongs to a designed member
    spacing: np.ndarray
    legs: np.ndarray
    area: np.ndarray
    Aoh: np.ndarray
    ph: np.ndarray
    leg_gap: np.ndarray


def _provided(mb: Members, rs: Resampled, opt: Options, lay: Layouts, st) -> Provided:
    grid = rs.grid
    S = len(grid.x)
    on = lay.option[grid.member] >= 0
    spacing = np.full(S, np.inf)
    k = np.maximum(lay.option, 0)[grid.member]
    cols = grid.member
    sides = detailing.jump_sides(grid.member, grid.x, grid.side)
    for m, layout in lay.layouts.items():
        sl = slice(grid.offsets[m], grid.offsets[m + 1])
        spacing[sl] = detailing.provided_spacing(layout.positions, rs.x_clear[sl], float(mb.geo.clear_span[m]),
                                                 sides[sl])
    legs = np.where(on, opt.legs[k, cols], 0.0)
    leg_gap = detailing.leg_spacing(mb.sec.b[cols], st.clear_cover_mm, opt.db[k], np.maximum(legs, 1))
    return Provided(on, spacing, legs, np.where(on, opt.area[k], 0.0), opt.Aoh[k, cols], opt.ph[k, cols], leg_gap)


def _check(mb: Members, rs: Resampled, cand, dem: demand.Demand, prov: Provided, lay: Layouts,
           settings: Settings) -> demand.Capacity:
    """Step 6, the self-check: every station of every designed member, every candidate
    combination, and every gap between stirrups against the practical minimum."""
    sec = mb.sec.take(rs.grid.member)
    cap = demand.check_layout(sec, cand, dem, prov.area, prov.legs, prov.spacing, prov.Aoh, prov.ph, prov.leg_gap,
                              lay.stirrups_here)
    bad = prov.on & ~cap.ok
    if bad.any():
        k = np.flatnonzero(bad)[0]
        m = rs.grid.member[k]
        raise SelfCheckError(f"layout of member {mb.names[m]} fails its self-check at x = {rs.x_clear[k]:.0f} mm "
                             f"(utilization {cap.utilization[k]:.3f}, s = {prov.spacing[k]:g} mm, "
                             f"s_max = {dem.s_max[k]:g} mm)")
    smin = settings.detailing.min_spacing_mm
    for m, layout in lay.layouts.items():
        x = layout.positions
        if len(x) and (x[0] <= 0 or x[-1] >= mb.geo.clear_span[m]):
            raise SelfCheckError(f"stirrups of member {mb.names[m]} run outside its clear span "
                                 f"({x[0]:g} to {x[-1]:g} mm of {mb.geo.clear_span[m]:g} mm)")
        gaps = np.diff(x)
        if len(gaps) and gaps.min() < smin - 0.05 and "one zone throughout" not in layout.message:
            raise SelfCheckError(f"stirrups of member {mb.names[m]} are {gaps.min():g} mm apart, under the "
                                 f"{smin:g} mm minimum")
    return cap


def _governing(values: np.ndarray, tie: np.ndarray, bounds: np.ndarray) -> np.ndarray:
    """Index of the largest value within each segment, ties (to 1e-9) broken by the largest
    ``tie``, then by the first in order."""
    seg = np.repeat(np.arange(len(bounds) - 1), np.diff(bounds))
    first = -np.arange(len(values))
    order = np.lexsort((first, np.round(tie, 9), np.round(values, 9), seg))
    return order[bounds[1:] - 1]


def _records(mb: Members, rs: Resampled, cset, cand, dem: demand.Demand, opt: Options, lay: Layouts,
             prov: Provided, cap: demand.Capacity | None, why_deep: np.ndarray, settings: Settings):
    """Step 7: members.csv rows, zones.csv rows, stirrup positions and the station trace."""
    st, grid, n = settings.detailing, rs.grid, len(mb.names)
    p = dem.pairs
    cs = cand.station
    k_ref = np.where(lay.option >= 0, lay.option, int(np.argmax(opt.Aoh.mean(axis=1))))  # bar for undesigned
    torsion_ratio = demand.torsion_limit_ratio(mb.sec.take(grid.member), cand, dem,
                                               opt.Aoh[k_ref[grid.member], grid.member],
                                               opt.ph[k_ref[grid.member], grid.member]) if p.torsion.any() else None
    # per candidate: the utilization it produces (provided layout, else the section limits)
    if cap is not None:
        pair_u = np.where(prov.on[cs], np.maximum(cap.pair_utilization, p.shear_ratio), p.shear_ratio)
        with np.errstate(divide="ignore", invalid="ignore"):
            tie = np.where(prov.on[cs], np.where(cap.phi_vn > 0, p.vu / cap.phi_vn, 0.0), p.vu)
    else:
        pair_u, tie = p.shear_ratio, p.vu
    if torsion_ratio is not None:
        s_ = mb.sec.take(grid.member[cs])
        tr = aci.torsion_section_ok(p.vu, p.tu, p.vc_hi, s_.fc, s_.b, s_.d, opt.Aoh[k_ref[grid.member[cs]],
                                    grid.member[cs]], opt.ph[k_ref[grid.member[cs]], grid.member[cs]])
        pair_u = np.maximum(pair_u, np.where(p.torsion & ~prov.on[cs], tr, 0.0))
    gov_station = _governing(pair_u, tie, cand.bounds)  # per station: its governing candidate
    station_util = pair_u[gov_station]
    member_bounds = cand.bounds[grid.offsets]
    gov_member = _governing(pair_u, tie, member_bounds)  # per member
    names_gov = cand.names(cset, np.concatenate([gov_station, gov_member]))
    name_station, name_member = names_gov[:len(gov_station)], names_gov[len(gov_station):]

    has_min = np.zeros(len(cs), bool)
    if cap is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            av_prov = np.where(prov.on & np.isfinite(prov.spacing), prov.legs * prov.area / prov.spacing, 0.0)
        has_min = (av_prov >= dem.av_min_s * (1 - 1e-9))[cs] & prov.on[cs]
    vc_used = np.where(has_min, p.vc_hi, np.where(prov.on[cs], p.vc_lo, p.vc_hi))
    sec_p = mb.sec.take(grid.member[cs])
    limit = aci.section_limit(p.vc_hi, sec_p.fc, sec_p.b, sec_p.d)
    eq = _vc_equation(sec_p, p, has_min | ~prov.on[cs])
    at_chosen = p.ata / opt.Aoh[k_ref[grid.member[cs]], grid.member[cs]]
    al = aci.al_required(at_chosen, opt.ph[k_ref[grid.member[cs]], grid.member[cs]], sec_p.fyt, sec_p.fy,
                         sec_p.fc, sec_p.Acp, sec_p.b)
    al = np.where(p.torsion, al, 0.0)
    al_member = np.maximum.reduceat(al, member_bounds[:-1]) if len(al) else np.zeros(n)

    rows, zones, stirrups = [], [], []
    first_st, last_st = grid.offsets[:-1], grid.offsets[1:] - 1
    for m in range(n):
        j = gov_member[m]
        common = dict(
            crit_i=rs.rules.crit_i[m], crit_j=rs.rules.crit_j[m],
            vu_design_i_kN=round(dem.vu_max[first_st[m]] / 1e3, 2), vu_design_j_kN=round(dem.vu_max[last_st[m]] / 1e3, 2),
            governing_case=name_member[m], phi_vc_kN=round(aci.PHI_SHEAR * vc_used[j] / 1e3, 2),
            phi_vn_limit_kN=round(limit[j] / 1e3, 2), utilization=round(float(pair_u[j]), 3),
            x_governing_mm=round(float(rs.x_clear[cs[j]]), 1), vu_kN=round(p.vu[j] / 1e3, 2),
            nu_kN=round(p.nu[j] / 1e3, 2), tu_kNm=round(p.tu[j] / 1e6, 3), vc_equation=eq[j],
            al_torsion_mm2=round(float(al_member[m]), 0) if al_member[m] > 0 else None)
        name = mb.names[m]
        if why_deep[m]:
            rows.append(_row(name, "deep-beam", why_deep[m], **common))
            continue
        if lay.option[m] < 0:
            sl = slice(grid.offsets[m], grid.offsets[m + 1])
            ratio = float(dem.shear_ratio[sl].max())
            if ratio > 1.0:
                bd = float(mb.sec.b[m] * mb.sec.d[m]) * ratio
                msg = (f"Vu exceeds the section limit of 22.5.1.2 (ratio {ratio:.2f}); needs bw*d of about "
                       f"{bd:,.0f} mm^2")
            else:
                msg = lay.reasons[m][1]
            rows.append(_row(name, "resize", msg, **common))
            continue
        layout = lay.layouts[m]
        sl = slice(grid.offsets[m], grid.offsets[m + 1])
        closed = st.stirrup_shape == "closed" or bool(dem.torsion[sl].any())  # 25.7.1.6
        shapes = detailing.stirrup_set(float(mb.sec.b[m]), mb.geo.h[m], st.clear_cover_mm, layout.bar, layout.legs,
                                       closed, st.open_hook_deg)
        mass = layout.count * detailing.set_mass(shapes)
        message = layout.message
        if al_member[m] > 0:
            message = "; ".join(filter(None, [message, f"torsion: add Al = {al_member[m]:,.0f} mm^2 of longitudinal "
                                                      "bars around the perimeter (22.7.6.1, 9.6.4.3, 9.7.5)"]))
        rows.append(_row(name, "designed", message, stirrups_total=layout.count, stirrup_mass_kg=round(mass, 2),
                         **common))
        stirrups.append(pd.DataFrame({"member": name, "x_mm": layout.positions}))
        for z, zone in enumerate(detailing.zones_from_positions(layout.positions, float(mb.geo.clear_span[m]),
                                                                layout.empty), start=1):
            zones.append(dict(member=name, zone=z, start_mm=round(zone.start, 1), end_mm=round(zone.end, 1),
                              bar=layout.bar if zone.count else "", legs=layout.legs if zone.count else 0,
                              spacing_mm=round(zone.spacing, 1) if np.isfinite(zone.spacing) else None,
                              count=zone.count))

    g = gov_station
    S = len(grid.x)
    cols = np.arange(S)
    k_st = k_ref[grid.member]
    Aoh_st, ph_st = opt.Aoh[k_st, grid.member], opt.ph[k_st, grid.member]
    largest_v = _governing(p.vu, np.zeros(len(p.vu)), cand.bounds)
    on = prov.on
    with np.errstate(divide="ignore", invalid="ignore"):
        av_prov = np.where(on & np.isfinite(prov.spacing), prov.legs * prov.area / prov.spacing,
                           np.where(on, 0.0, np.nan))
    sec_st = mb.sec.take(grid.member)
    take = lambda values, idx: pa.array(list(values), pa.string()).take(pa.array(idx))  # strings built in Arrow
    trace = pa.table({
        "member": take(mb.names, grid.member), "x_mm": np.round(rs.x_clear, 2), "side": grid.side,
        "governing_case": pa.array(list(name_station), pa.string()), "vu_kN": p.vu[g] / 1e3,
        "vu_max_kN": dem.vu_max / 1e3, "nu_kN": p.nu[g] / 1e3, "tu_kNm": p.tu[g] / 1e6,
        "phi_vc_kN": aci.PHI_SHEAR * vc_used[g] / 1e3,
        # phi*Vn of the combination with the largest Vu, so that it compares with vu_max
        "phi_vn_kN": np.where(on, cap.phi_vn[largest_v] if cap is not None else np.nan, np.nan) / 1e3,
        "phi_vn_limit_kN": limit[g] / 1e3,
        "avmin_threshold_kN": np.where(sec_st.avmin_exempt, aci.PHI_SHEAR * p.vc_lo[g],
                                       aci.av_min_threshold(sec_st.fc, sec_st.b, sec_st.d, sec_st.lam)) / 1e3,
        "vc_equation": pa.array(list(eq[g]), pa.string()),
        "av_s_req": p.av[g], "at_s_req": p.ata[g] / Aoh_st, "av_s_env": dem.av_env, "at_s_env": dem.ata_env / Aoh_st,
        "av_min_s": dem.av_min_s, "avmin_required": dem.minimum, "torsion": dem.torsion,
        "s_max_mm": np.where(dem.torsion, np.minimum(dem.s_max, aci.torsion_max_spacing(ph_st)), dem.s_max),
        "s_allowed_mm": np.where(on, lay.allowed, np.nan),
        "spacing_mm": np.where(on, prov.spacing, np.nan), "av_s_prov": av_prov,
        "al_mm2": al[g], "utilization": station_util,
    })
    positions = pd.concat(stirrups, ignore_index=True) if stirrups else pd.DataFrame(columns=["member", "x_mm"])
    return rows, zones, trace, positions


def _vc_equation(sec: demand.Section, p: demand.PairDemand, with_min: np.ndarray) -> np.ndarray:
    """Which row of Table 22.5.5.1 gave Vc (or its 22.5.5.1.1 cap, or zero under tension)."""
    a = aci.vc_with_min_stirrups(sec.fc, sec.b, sec.d, p.nu, sec.Ag, sec.lam)
    cap = aci.vc_cap(sec.fc, sec.b, sec.d, sec.lam)
    vc = np.where(with_min, p.vc_hi, p.vc_lo)
    out = np.where(with_min, np.where(np.isclose(p.vc_hi, a, rtol=1e-9, atol=1e-6), "22.5.5.1(a)", "22.5.5.1(b)"),
                   "22.5.5.1(c)").astype(object)
    out = np.where(np.isclose(vc, cap, rtol=1e-9) & (vc > 0), "22.5.5.1.1 cap", out)
    return np.where(vc <= 0, "Vc = 0 (axial tension)", out)


def _design_batch(bi: BatchInput, cset: combos_mod.ComboSet, settings: Settings):
    """One batch of beams: geometry, resampling and end rules, demand, layout, self-check, records."""
    mb = _geometry(bi.beams)
    rs = _resample(mb, bi, cset, settings)
    cand = combos_mod.candidates(cset, rs.case_values)
    sec_st = mb.sec.take(rs.grid.member)
    dem = demand.required(sec_st, cand)
    cantilever = mb.free_i | mb.free_j
    why_deep = deep_beam_reasons(mb.geo.clear_span, mb.geo.h, mb.geo.d, cantilever, rs.rules.point_load_near_bearing)
    opt = _options(mb, dem, rs.grid, settings.detailing)
    lay = _layout(mb, rs, cand, dem, opt, why_deep != "", settings)
    prov = _provided(mb, rs, opt, lay, settings.detailing)
    cap = _check(mb, rs, cand, dem, prov, lay, settings)
    rows, zones, trace, positions = _records(mb, rs, cset, cand, dem, opt, lay, prov, cap, why_deep, settings)
    return rows, zones, trace, rs.warnings, positions


def deep_beam_reasons(clear_span, h, d, cantilever, point_near_bearing) -> np.ndarray:
    """Why a member is not designed by the sectional method ('' where it is).

    Supported at both ends: clear span <= 4h (9.9.1.1(a)) or a concentrated load within
    2h of a bearing face (9.9.1.1(b)). A cantilever is not supported on the face opposite
    its load, so 9.9.1.1 does not apply; one shorter than d has bracket proportions
    (a_v/d < 1, 16.5.1.1) and is not designed here either.
    """
    span_rule = aci.is_deep_by_span(clear_span, h) & ~cantilever
    load_rule = point_near_bearing & ~cantilever & ~span_rule
    bracket = cantilever & (clear_span < d)
    out = np.full(len(clear_span), "", dtype=object)
    out[span_rule] = "clear span <= 4h (ACI 318-19 9.9.1.1(a)): design by strut-and-tie (Ch. 23), not sectionally"
    out[load_rule] = ("concentrated load within 2h of a bearing face (ACI 318-19 9.9.1.1(b)): "
                      "design by strut-and-tie (Ch. 23), not sectionally")
    out[bracket] = "cantilever shorter than d: bracket or corbel (ACI 318-19 16.5), not designed sectionally"
    return out


def design_into(run: Run, settings: Settings, folder: Path, map_parts=map, progress=None) -> Result:
    """Design a run and write its design folder's contents into ``folder`` (a temporary
    folder the store renames into place): member results, zones, combinations, the
    per-station trace (stations/, one file per part) and a manifest."""
    result = design_run(run, settings, folder / "stations", map_parts, progress)
    pq.write_table(pa.Table.from_pandas(result.members, preserve_index=False), folder / "members.parquet")
    pq.write_table(pa.Table.from_pandas(result.zones, preserve_index=False), folder / "zones.parquet")
    pq.write_table(pa.Table.from_pandas(result.stirrups.astype({"member": str, "x_mm": float}), preserve_index=False),
                   folder / "stirrups.parquet")
    try:  # every distinct combination with its factors, where they can be listed one by one
        names, factors = result.combos.explicit
    except ValueError:
        names, factors = [], np.zeros((0, len(result.combos.cases)))
    pq.write_table(pa.table({"combination": pa.array(names, pa.string()),
                             **{c: factors[:, k] for k, c in enumerate(result.combos.cases)}}),
                   folder / "combinations.parquet")
    return result


def design_manifest(result: Result, settings: Settings) -> dict:
    return {"code_edition": aci.EDITION, "settings": settings.as_dict(),
            "combinations_prefactored": result.combos.prefactored, "combination_rules": result.combos.describe(),
            "combinations_counted": result.combos.count, "warnings": result.warnings}
