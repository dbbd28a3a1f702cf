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
from postproc import design, detailing, stations
from postproc.codes import aci318_19 as aci
from postproc.settings import BAR_CATALOGUE, Settings
from postproc.store import Run
from postproc.terms import STATUSES  # noqa: F401  (engine.STATUSES: every member leaves with one)

MEMBER_COLUMNS = ["member", "status", "message", "governing_case", "vu_design_i_kN", "vu_design_j_kN",
                  "crit_i", "crit_j", "phi_vc_kN", "phi_vn_limit_kN", "utilization", "stirrups_total",
                  "stirrup_mass_kg"]
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
    unused = sorted(set(types) - set(case_names))
    warnings = [f"cases.csv lists case '{c}', which has no rows in forces.csv" for c in unused]
    return combos_mod.aci_5_3_1(types, case_names, settings.combinations), warnings


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
        * max(len(cset.names), len(cset.cases))
    start = 0
    while start < len(beams):
        stop = start + max(1, int(np.searchsorted(np.cumsum(est[start:]), BATCH_CELLS)))
        r0, r1 = bounds[start], bounds[stop]
        res = _design_batch(beams.iloc[start:stop].reset_index(drop=True), f_member[r0:r1] - start,
                            cidx[r0:r1], x[r0:r1], {k: v[r0:r1] for k, v in values.items()}, cset, settings)
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


def _design_batch(bm: pd.DataFrame, f_member, f_case, f_x, f_values, cset, settings: Settings):
    st = settings.detailing
    n = len(bm)
    g = stations.Geometry(
        length=bm["length_m"].to_numpy() * 1e3, face_i=bm["face_i_mm"].to_numpy(), face_j=bm["face_j_mm"].to_numpy(),
        d=bm["d_mm"].to_numpy(), h=bm["h_mm"].to_numpy(), support_i=bm["support_i"].to_numpy(object),
        support_j=bm["support_j"].to_numpy(object), load_top=(bm["load_face"] == "top").to_numpy())
    names = bm["member"].to_numpy(object)
    width = bm["b_mm"].to_numpy(float)
    samples = stations.Samples.build(f_member, f_case, f_x, f_values)
    grid = stations.build_grid(g, samples, settings.stations)
    span = float(g.length.max() * 2 + 1e3)
    case_vals, missing = stations.interpolate(samples, len(cset.cases), grid.member, grid.x, grid.side, span)
    rules = stations.end_rules(g, grid, samples, settings.stations)
    src = rules.source
    C = cset.factors
    Vu = np.abs(C @ case_vals["V"])[:, src]
    Nu = -(C @ case_vals["N"])[:, src]  # ACI sign: compression positive
    Tu = np.abs(C @ case_vals["T"])[:, src]

    warnings = []
    miss_m = np.unique(grid.member[missing.any(axis=0)])
    for m in miss_m:
        lacking = [cset.cases[c] for c in np.flatnonzero(missing[:, grid.member == m].any(axis=1))]
        warnings.append(f"member {names[m]}: no rows for case(s) {', '.join(lacking)}; taken as zero")

    first_row = np.searchsorted(samples.member, np.arange(n))
    x_lo = np.minimum.reduceat(samples.x, first_row)
    x_hi = np.maximum.reduceat(samples.x, first_row)
    short = (x_lo > g.start + 10.0) | (x_hi < g.end - 10.0)  # 10 mm: rounding of exported stations
    for m in np.flatnonzero(short):
        warnings.append(f"member {names[m]}: forces cover x = {x_lo[m] / 1e3:.3f} to {x_hi[m] / 1e3:.3f} m only; "
                        "the end values are held over the rest of the clear span")

    largest_db = max(BAR_CATALOGUE[b][0] for b, _ in st.ladder)
    sec_m = design.section_from_members(
        b=bm["b_mm"].to_numpy(), h=g.h, d=g.d, fc=bm["fc_mpa"].to_numpy(), fyt=bm["fyt_mpa"].to_numpy(),
        lam=bm["lambda"].to_numpy(), fy=bm["fy_mpa"].to_numpy(), As=bm["as_tension_mm2"].to_numpy(float),
        bf=bm["bf_mm"].to_numpy(float), hf=bm["hf_mm"].to_numpy(float),
        cover_to_stirrup=st.clear_cover_mm, stirrup_db=largest_db)
    sec = sec_m.take(grid.member)
    dem = design.required(sec, Vu, Nu, Tu)
    x_clear = grid.x - g.start[grid.member]

    # per-station envelope pieces the layout needs
    stirrups_here = dem.avmin_required | (dem.av_s_env > 0) | (dem.at_s_env > 0) | st.stirrups_throughout
    cantilever = (g.support_i == "free") | (g.support_j == "free")
    why_deep = deep_beam_reasons(g.clear_span, g.h, g.d, cantilever, rules.point_load_near_bearing)
    deep = why_deep != ""
    resize = np.zeros(n, bool)
    np.logical_or.at(resize, grid.member, dem.section_ratio > 1.0)

    rows, zones, stirrups = [], [], []
    spacing = np.full(len(grid.x), np.inf)
    legs_st = np.zeros(len(grid.x))
    area_st = np.zeros(len(grid.x))
    leg_gap = np.zeros(len(grid.x))
    designed = np.zeros(n, bool)
    layouts: dict[int, detailing.Layout] = {}
    messages: dict[int, str] = {}
    for m in range(n):
        if deep[m] or resize[m]:
            continue
        sl = slice(grid.offsets[m], grid.offsets[m + 1])
        lay = detailing.layout_member(
            x_clear[sl], g.clear_span[m], dem.av_s_env[sl], dem.at_s_env[sl], dem.s_max[sl],
            float(dem.s_max_across[sl][stirrups_here[sl]].min()) if stirrups_here[sl].any() else np.inf,
            stirrups_here[sl], float(width[m]), g.support_i[m] == "free", g.support_j[m] == "free", st)
        if isinstance(lay, str):
            messages[m] = lay
            continue
        layouts[m] = lay
        designed[m] = True
        spacing[sl] = detailing.provided_spacing(lay, x_clear[sl])
        legs_st[sl] = lay.legs
        area_st[sl] = BAR_CATALOGUE[lay.bar][1]
        leg_gap[sl] = detailing.leg_spacing(float(width[m]), st.clear_cover_mm, BAR_CATALOGUE[lay.bar][0], lay.legs)
        if not detailing.gaps_within_spacing(lay, g.clear_span[m], g.support_i[m] == "free", g.support_j[m] == "free"):
            raise SelfCheckError(f"stirrups of member {names[m]} leave a gap wider than their zone's spacing")

    cap = design.check_layout(sec, Vu, Nu, Tu, area_st, legs_st, spacing, dem, leg_gap)
    on = designed[grid.member]
    bad = on & ~cap.ok
    if bad.any():
        k = np.flatnonzero(bad)[0]
        m = grid.member[k]
        raise SelfCheckError(f"layout of member {names[m]} fails its self-check at x = {x_clear[k]:.0f} mm "
                             f"(utilization {cap.utilization[k]:.3f}, s = {spacing[k]:g} mm, "
                             f"s_max = {dem.s_max[k]:g} mm)")

    util = np.maximum(np.where(on, cap.utilization, 0.0), dem.section_ratio)
    k_gov = _argmax_per_member(util, grid.offsets)
    first_st = grid.offsets[:-1]
    last_st = grid.offsets[1:] - 1
    vu_env = dem.vu_max
    for m in range(n):
        k = k_gov[m]
        common = dict(
            crit_i=rules.crit_i[m], crit_j=rules.crit_j[m],
            vu_design_i_kN=round(vu_env[first_st[m]] / 1e3, 2), vu_design_j_kN=round(vu_env[last_st[m]] / 1e3, 2),
            governing_case=cset.names[dem.governing[k]], phi_vc_kN=round(dem.phi_vc[k] / 1e3, 2),
            phi_vn_limit_kN=round(dem.phi_vn_limit[k] / 1e3, 2), utilization=round(float(util[k]), 3))
        name = names[m]
        if deep[m]:
            rows.append(_row(name, "deep-beam", why_deep[m], **common))
        elif resize[m]:
            sl = slice(grid.offsets[m], grid.offsets[m + 1])
            ratio = float(dem.section_ratio[sl].max())
            bd = float(width[m] * g.d[m]) * ratio
            rows.append(_row(name, "resize", f"Vu exceeds the section limit of 22.5.1.2 (ratio {ratio:.2f}); "
                                            f"needs bw*d of about {bd:,.0f} mm^2", **common))
        elif m in messages:
            rows.append(_row(name, "resize", messages[m], **common))
        else:
            lay = layouts[m]
            sl = slice(grid.offsets[m], grid.offsets[m + 1])
            closed = st.stirrup_shape == "closed" or bool(dem.torsion[sl].any())  # 25.7.1.6
            shapes = detailing.stirrup_set(float(width[m]), g.h[m], st.clear_cover_mm, lay.bar, lay.legs,
                                           closed, st.open_hook_deg)
            mass = lay.count * detailing.set_mass(shapes)
            rows.append(_row(name, "designed", lay.message, stirrups_total=lay.count,
                             stirrup_mass_kg=round(mass, 2), **common))
            stirrups.append(pd.DataFrame({"member": name, "x_mm": np.round(lay.positions, 1)}))
            for z, zone in enumerate(lay.zones, start=1):
                zones.append(dict(member=name, zone=z, start_mm=round(zone.start, 1), end_mm=round(zone.end, 1),
                                  bar=lay.bar if zone.count else "", legs=lay.legs if zone.count else 0,
                                  spacing_mm=zone.spacing if np.isfinite(zone.spacing) else None,
                                  count=zone.count))

    cols = np.arange(len(grid.x))
    gov = dem.governing
    take = lambda values, idx: pa.array(list(values), pa.string()).take(pa.array(idx))  # strings built in Arrow
    st_df = pa.table({
        "member": take(names, grid.member), "x_mm": np.round(x_clear, 2), "side": grid.side,
        "governing_case": take(cset.names, gov), "vu_kN": dem.vu / 1e3, "vu_max_kN": dem.vu_max / 1e3,
        "nu_kN": Nu[gov, cols] / 1e3, "tu_kNm": Tu[gov, cols] / 1e6, "phi_vc_kN": dem.phi_vc / 1e3,
        # phi*Vn of the combination with the largest Vu, so that it compares with vu_max
        "phi_vn_kN": np.where(on, cap.phi_vn[np.argmax(Vu, axis=0), cols], np.nan) / 1e3,
        "phi_vn_limit_kN": dem.phi_vn_limit / 1e3,
        "avmin_threshold_kN": np.where(sec.avmin_exempt, dem.phi_vc_plain,
                                       aci.av_min_threshold(sec.fc, sec.b, sec.d, sec.lam)) / 1e3,
        "av_s_req": dem.av_s, "at_s_req": dem.at_s, "av_s_env": dem.av_s_env, "at_s_env": dem.at_s_env,
        "av_min_s": dem.av_min_s, "avmin_required": dem.avmin_required, "torsion": dem.torsion,
        "s_max_mm": dem.s_max, "spacing_mm": np.where(on, spacing, np.nan),
        "av_s_prov": np.where(on & np.isfinite(spacing), legs_st * area_st / spacing, np.where(on, 0.0, np.nan)),
        "utilization": util,
    })
    positions = pd.concat(stirrups, ignore_index=True) if stirrups else pd.DataFrame(columns=["member", "x_mm"])
    return rows, zones, st_df, warnings, positions


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


def _argmax_per_member(values: np.ndarray, offsets: np.ndarray) -> np.ndarray:
    """Index of the largest value within each member's slice of stations."""
    n = len(offsets) - 1
    member = np.repeat(np.arange(n), np.diff(offsets))
    order = np.lexsort((values, member))
    return order[offsets[1:] - 1]


def design_into(run: Run, settings: Settings, folder: Path, map_parts=map, progress=None) -> Result:
    """Design a run and write its design folder's contents into ``folder`` (a temporary
    folder the store renames into place): member results, zones, combinations, the
    per-station trace (stations/, one file per part) and a manifest."""
    result = design_run(run, settings, folder / "stations", map_parts, progress)
    pq.write_table(pa.Table.from_pandas(result.members, preserve_index=False), folder / "members.parquet")
    pq.write_table(pa.Table.from_pandas(result.zones, preserve_index=False), folder / "zones.parquet")
    pq.write_table(pa.Table.from_pandas(result.stirrups.astype({"member": str, "x_mm": float}), preserve_index=False),
                   folder / "stirrups.parquet")
    pq.write_table(pa.table({"combination": result.combos.names,
                             **{c: result.combos.factors[:, k] for k, c in enumerate(result.combos.cases)}}),
                   folder / "combinations.parquet")
    return result


def design_manifest(result: Result, settings: Settings) -> dict:
    return {"code_edition": aci.EDITION, "settings": settings.as_dict(),
            "combinations_prefactored": result.combos.prefactored, "warnings": result.warnings}
