"""Deep beams and D-regions in the beam family (ACI 318-19 9.9.1.1, Chapter 23).

The members 9.9.1.1 flags (clear span <= 4h, or a concentrated load within 2h of a
bearing face; cantilevers are never flagged) go to the strut-and-tie design of
``postproc.stm``; its outcome joins the beam family's layout, self-check and records:

    regions -> (the beam family's options and layout, with ``allowed_spacing`` over the
    regions) -> check -> station_columns -> records

What goes into the model, per member (each choice is said in the member's message):

- Geometry: the clear span, h, bw (the web; a flange is not counted), d (the tie at the
  centroid of the bottom steel), f'c, fy (tie), fyt (stirrups, capped at 420 MPa by
  20.2.2.4). Bearing length along the member at a column or wall: ``[deep] bearing_mm``,
  or else twice the face offset (the node on the support's centreline, common practice),
  not more than ``bearing_max_h`` x h taken next to the face (a longer support is not
  counted whole: the bearing node stays near the face, a lower-bound choice); the tie bars
  run to the support's far face (twice the face offset) less the end cover.
- Loads, per combination of ``ComboSet.explicit`` (every combination, so the envelope is
  exact whatever load path each one takes): concentrated loads from the jumps of V inside
  the clear span (``stations.jumps``), P = V(left) - V(right) of each case, factored; the
  distributed part of V (the jumps taken out) as a uniform load w no smaller, for the
  simple span, than its total, twice either end reaction and 8 M,max / ln^2 (exact for a
  uniform load; for any other shape it gives reactions and moments no smaller); the frame's
  shear at each face; the largest axial tension along the member, carried whole by the
  bottom tie, and the largest axial compression, carried whole by the top chord and the
  thrust at the top nodes (conservative: the other chord is not relieved).
- Frame action. The model is statically determinate: loads carried down to simple
  bearings. End regions start from the frame's own shear at the face (every combination),
  so frame action is in their shear; a whole-member model takes the simple-span
  reactions of its loads, and is refused where the frame's shear at a face exceeds that
  reaction by more than ``frame_shear_tolerance`` in any combination (end moments, lateral
  load). A restrained end's hogging moment is not modelled: the bottom tie is sized for
  zero moment at the bearing (conservative for it) and the top bars over the support are
  the flexural design's (not checked here); each member's message says so.
- Not modelled, with the reason in the member's message (status ``deep-beam``): what
  ``postproc.stm`` refuses (indirect support or no bearing at a modelled end, hung or
  upward loads, a face shear that reverses, struts under 25 degrees to a tie, 23.2.7),
  d outside (h/2, h), axial compression above ``compression_limit`` x f'c Ag (a member
  in compression, not a beam), beams of intermediate or special moment frames, torsion
  above the threshold of 22.7.4.1 in a modelled region, frame action beyond the tolerance,
  and combinations too many to list one by one.

In a modelled region the stirrups follow the model: Av/s at least 0.0025 bw (9.9.3.1(a))
and what each stirrup tie of the truss needs over its spread (23.7.2), at a spacing of
at most min(d/5, 300 mm) (9.9.4.3); outside the regions the sectional demand governs as
for any beam. One set-out covers both, and one self-check.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from types import SimpleNamespace

import numpy as np
import pandas as pd

from postproc import detailing, stations, stm, units
from postproc.codes import aci318_19_stm as stm_code
from postproc.demand import frames as fr
from postproc.pipeline import SelfCheckError, edition, unit_system
from postproc.settings import Settings
from postproc.terms import METHODS, with_frame

METHOD_SECTIONAL, METHOD_STM, METHOD_JOINED = METHODS
TABLES = ("members", "models", "nodes", "faces", "struts", "ties")  # stored as design/stm_<name>.parquet
# the tie bar: the largest of these whose anchorage fits at every bearing the model uses (stm._tie);
# the same bars under their inch-pound designations
TIE_BAR_LADDER = {"si": ("#36", "#32", "#29", "#25", "#22", "#19", "#16", "#13"),
                  "us": ("#11", "#10", "#9", "#8", "#7", "#6", "#5", "#4")}
CELLS_PER_CHUNK = 4_000_000  # combinations x stations of the members designed together (memory bound)


@dataclass(frozen=True)
class Regions:
    """The strut-and-tie step's outcome for a batch of beams."""

    flagged: np.ndarray  # per member: flagged by 9.9.1.1 (not a bracket): went to this step
    status: np.ndarray  # per member: '' (not flagged), 'designed', 'resize' (the model), 'deep-beam' (not modelled)
    message: np.ndarray  # per member: why not modelled, or what was assumed
    method: np.ndarray  # per member: the method that designs it ('' where none does)
    station: np.ndarray  # per station: inside a strut-and-tie model
    av_req: np.ndarray  # per station: Av/s the model needs there (0 outside), mm^2/mm
    av_tie: np.ndarray  # per station: of which the stirrup ties of the truss (0 where none)
    tie_combination: np.ndarray  # per station: combination of the governing stirrup tie ('' where the minimum governs)
    s_max: np.ndarray  # per station: 9.9.4.3 spacing limit (inf outside)
    phi_vn_deep: np.ndarray  # per station: phi 0.83 sqrt(f'c) bw d (9.9.2.1), NaN outside
    face_shear: np.ndarray  # (2, members): largest frame shear at face i and j over the combinations (N)
    summary: pd.DataFrame  # per modelled member (index: member position in the batch)
    tables: dict[str, pd.DataFrame] = field(default_factory=dict)

    def skip(self) -> np.ndarray:
        """Members without a layout from this step: not modelled, or the model needs resizing."""
        return np.isin(self.status, ("deep-beam", "resize"))


def stored(run, name: str) -> pd.DataFrame:
    """One of a designed run's strut-and-tie tables (``TABLES``), read through the store's
    checks, under the SI column names with the values in the run's units (units.si_keyed);
    empty where the run holds none (designed before they existed)."""
    rel = f"design/stm_{name}.parquet"
    if rel not in run.listed_under("design"):
        return pd.DataFrame()
    df = units.si_keyed(run.table(rel).to_pandas())
    return df.rename(columns={c: c[:-4] + "_MPa" for c in df.columns if c.endswith("_mpa")})  # stm's spelling


def _empty(n: int, S: int) -> Regions:
    return Regions(np.zeros(n, bool), np.full(n, "", object), np.full(n, "", object), np.full(n, "", object),
                   np.zeros(S, bool), np.zeros(S), np.zeros(S), np.full(S, "", object), np.full(S, np.inf),
                   np.full(S, np.nan), np.full((2, n), np.nan), pd.DataFrame(), {})


def bearing_lengths(face: np.ndarray, h: np.ndarray, settings: Settings) -> tuple[np.ndarray, np.ndarray]:
    """(bearing length used by the model, member end beyond the inner face) at one end, mm or in.

    ``[deep] bearing_mm`` where given, else twice the face offset (node on the support's
    centreline, common practice); the model uses at most ``bearing_max_h`` x h of it, next
    to the face (a lower-bound choice: a shorter bearing only raises its stress)."""
    full = np.where(settings.deep.bearing > 0, settings.deep.bearing, 2.0 * np.asarray(face, float))
    return np.minimum(full, settings.deep.bearing_max_h * np.asarray(h, float)), full


def regions(mb, rs, cset, dem, why_deep: np.ndarray, settings: Settings) -> Regions:
    """Design the 9.9.1.1 members of a batch by strut-and-tie; per station, where the models
    govern and what they need. ``mb`` and ``dem`` are the beam family's geometry and demand."""
    grid, g = rs.grid, mb.geo
    n, S = len(mb.names), len(grid.x)
    flagged = (why_deep != "") & ~(mb.free_i | mb.free_j)
    if not flagged.any():
        return _empty(n, S)
    out = _empty(n, S)
    status, message, method = out.status, out.message, out.method
    status[flagged] = "deep-beam"
    note = np.full(n, "", object)  # why a flagged member is not modelled
    d_ok = (g.d > g.h / 2) & (g.d < g.h)
    note[flagged & ~d_ok] = ("d must lie between h/2 and h for the automatic truss (the tie at the centroid of the "
                             "bottom steel)")
    seismic = flagged & mb.frames.capacity & (note == "")
    note[seismic] = [with_frame("a beam of {a} {frame} moment frame (Chapter 18): its design shear comes from the "
                                "probable moments at its ends (18.4.2.3, 18.6.5), which the automatic truss does not "
                                "take; model it by hand", fr.NAMES[int(c)]) for c in mb.frames.code[seismic]]
    try:
        names, factors = cset.explicit
    except ValueError as exc:
        note[flagged & (note == "")] = f"{exc}: the strut-and-tie model is checked combination by combination"
        names, factors = [], np.zeros((0, len(cset.cases)))
    go = np.flatnonzero(flagged & (note == ""))
    names = np.asarray(names, dtype=object)

    results, tables = [], {k: [] for k in TABLES}
    per_station = dict(station=out.station, av_req=out.av_req, av_tie=out.av_tie, tie_combination=out.tie_combination,
                       s_max=out.s_max, phi_vn_deep=out.phi_vn_deep)
    if len(go):
        width = max(1, int(CELLS_PER_CHUNK // max(len(names) * float(np.mean(np.diff(grid.offsets)[go])), 1.0)))
        for start in range(0, len(go), width):
            chunk = go[start:start + width]
            res = _design_chunk(mb, rs, dem, chunk, names, factors, settings, note, per_station, out.face_shear)
            if res is not None:
                results.append(res[0])
                for k in TABLES:
                    tables[k].append(res[1][k])
    message[flagged & (note != "")] = [f"{w}; not designed: {why}" for w, why in
                                       zip(why_deep[flagged & (note != "")], note[flagged & (note != "")])]
    summary = pd.concat(results) if results else pd.DataFrame()
    for m, r in summary.iterrows():
        status[m] = r["stm_status"]
        method[m] = r["method"]
        message[m] = r["message"]
    kept = {k: pd.concat(v, ignore_index=True) for k, v in tables.items() if v}
    return Regions(flagged, status, message, method, per_station["station"], per_station["av_req"],
                   per_station["av_tie"], per_station["tie_combination"], per_station["s_max"],
                   per_station["phi_vn_deep"], out.face_shear, summary, kept)


def _design_chunk(mb, rs, dem, chunk, names, factors, settings: Settings, note, per_station, face_shear):
    """Loads of some flagged members for every combination, their strut-and-tie design and
    the checks of this module (compression, frame action, torsion). Fills ``note`` for
    members not modelled and the per-station arrays for the modelled ones."""
    grid, g, sec, samples = rs.grid, mb.geo, mb.sec, rs.samples
    n = len(mb.names)
    n_cases = factors.shape[1]
    a, b, ln = g.start, g.end, g.clear_span
    span = float(g.length.max() * 2 + 1e3)
    in_chunk = np.zeros(n, bool)
    in_chunk[chunk] = True
    local = np.full(n, -1)
    local[chunk] = np.arange(len(chunk))

    # concentrated loads: the jumps inside each clear span, per case
    jm, jx = stations.jumps(samples, settings.stations, n)
    inside = in_chunk[jm] & (jx > a[jm]) & (jx < b[jm])
    jm, jx = jm[inside], jx[inside]
    key = np.unique(jm * span + jx)
    jm = (key // span).astype(np.int64)
    jx = key - jm * span
    J = len(jm)
    if J:
        q_m, q_x = np.concatenate([jm, jm]), np.concatenate([jx, jx])
        q_s = np.concatenate([np.zeros(J, np.int8), np.ones(J, np.int8)])
        vals, _ = stations.interpolate(samples, n_cases, q_m, q_x, q_s, span)
        p_case = vals["V"][:, :J] - vals["V"][:, J:]  # P = V(left) - V(right), downward positive
    else:
        p_case = np.zeros((n_cases, 0))
    P = factors @ p_case  # (K, J)

    # the frame's values at every station of these members, as given (no end rule)
    sel = np.flatnonzero(in_chunk[grid.member])
    gm, gx, gs = grid.member[sel], grid.x[sel], grid.side[sel]
    vals, _ = stations.interpolate(samples, n_cases, gm, gx, gs, span)
    first = np.searchsorted(gm, chunk)  # the stations of member chunk[k] are first[k]:last[k] + 1
    last = np.searchsorted(gm, chunk, side="right") - 1
    skey = gm * span + gx
    jkey = jm * span + jx
    upto = np.where(gs == 1, np.searchsorted(jkey, skey, "right"), np.searchsorted(jkey, skey, "left"))
    cum = np.concatenate([np.zeros((n_cases, 1)), np.cumsum(p_case, axis=1)], axis=1)
    j_first = np.searchsorted(jm, gm)
    v_dist = vals["V"] + (cum[:, upto] - cum[:, j_first])  # the jumps taken out
    Vf = factors @ vals["V"]  # (K, Sc) factored shear, jumps in
    Vd = factors @ v_dist
    Nf = factors @ vals["N"] if "N" in vals else np.zeros_like(Vf)

    # the distributed part as an equivalent uniform load (see the module docstring)
    dx = np.diff(gx, append=gx[-1])
    dx[last] = 0.0
    seg = 0.5 * (Vd + np.roll(Vd, -1, axis=1)) * dx[None]
    cint = np.concatenate([np.zeros((Vd.shape[0], 1)), np.cumsum(seg, axis=1)], axis=1)
    l_c = ln[chunk]
    mean = (cint[:, last] - cint[:, first]) / l_c[None]
    k_of = local[gm]
    moment = (cint[:, :-1] - cint[:, first[k_of]]) - mean[:, k_of] * (gx - a[gm])[None]
    m_max = np.maximum.reduceat(moment, first, axis=1)
    W = Vd[:, first] - Vd[:, last]
    r_i = Vd[:, first] - mean
    r_j = W - r_i
    tol_w = settings.stations.point_load  # N or lb
    w_eq = np.where(W < -tol_w, W / l_c, np.maximum.reduce([np.zeros_like(W), W / l_c, 2 * r_i / l_c, 2 * r_j / l_c,
                                                             8 * m_max / l_c**2]))
    w_eq = np.where(np.abs(w_eq) * l_c <= tol_w, 0.0, w_eq)  # rounding of the export, not a load
    fs_i, fs_j = Vf[:, first], -Vf[:, last]
    face_shear[0, chunk] = fs_i.max(axis=0)
    face_shear[1, chunk] = fs_j.max(axis=0)
    tension = np.clip(np.maximum.reduceat(Nf, first, axis=1), 0.0, None)  # (K, members)
    squeeze = np.clip(-np.minimum.reduceat(Nf, first, axis=1), 0.0, None)
    compression = squeeze.max(axis=0, initial=0.0)

    U, u = unit_system(settings), edition(settings)
    limit = settings.deep.compression_limit * sec.fc[chunk] * sec.Ag[chunk]
    heavy = compression > limit + 1e-9
    for k in np.flatnonzero(heavy):
        note[chunk[k]] = (f"axial compression up to {compression[k] / U.per_force:,.0f} {U.force} exceeds "
                          f"{settings.deep.compression_limit:g} f'c Ag = {limit[k] / U.per_force:,.0f} {U.force}: a member "
                          "in compression is not modelled by the automatic truss ([deep] compression_limit)")
    if heavy.all():
        return None

    lb_i, full_i = bearing_lengths(g.face_i[chunk], g.h[chunk], settings)
    lb_j, full_j = bearing_lengths(g.face_j[chunk], g.h[chunk], settings)
    members = stm.DeepMembers(
        member=mb.names[chunk], clear_span=l_c, h=g.h[chunk], bw=sec.b[chunk], d=g.d[chunk], fc=sec.fc[chunk],
        fy=sec.fy[chunk], fyt=sec.fyt[chunk], bearing_i=lb_i, bearing_j=lb_j, support_i=g.support_i[chunk],
        support_j=g.support_j[chunk], load_face=np.where(g.load_top[chunk], "top", "bottom"),
        extension_i=full_i, extension_j=full_j, lam=sec.lam[chunk])
    loads = stm.DeepLoads(
        combinations=tuple(names), point_member=local[jm], point_x=jx - a[jm], point_load=P, udl=w_eq,
        face_shear_i=fs_i, face_shear_j=fs_j, axial_tension=tension, axial_compression=squeeze)
    st = settings.detailing
    options = replace(stm.StmOptions.for_units(U.name), point_width=settings.deep.load_width,
                      end_cover=settings.deep.end_cover, tie_bar_ladder=TIE_BAR_LADDER[U.name], stirrup_ladder=st.ladder,
                      spacing_module=st.spacing_module, min_spacing=st.min_spacing, u=u)
    r = stm.design(members, loads, options)  # its tables are named in the run's units; read here under SI names

    res = units.si_keyed(r.members).reset_index(drop=True)
    models = units.si_keyed(r.models)
    stm_status = np.where(heavy, "skip", res.status.to_numpy(object))
    # frame action against whole-member models: the simple-span reactions of the loads
    sA, sB = -lb_i / 2, l_c + lb_j / 2
    with np.errstate(invalid="ignore", divide="ignore"):
        ra = w_eq * l_c * (sB - l_c / 2) / (sB - sA)
        rb = w_eq * l_c - ra
        if J:
            pk = local[jm]
            px = jx - a[jm]
            np.add.at(ra.T, pk, (P * ((sB[pk] - px) / (sB - sA)[pk])).T)
            np.add.at(rb.T, pk, (P * ((px - sA[pk]) / (sB - sA)[pk])).T)
    pos = {name: k for k, name in enumerate(mb.names[chunk])}
    m_of = models.member.map(pos).to_numpy()  # chunk-local index of each model's member
    whole = np.zeros(len(chunk), bool)
    whole[m_of[(models.model == "whole").to_numpy()]] = True
    excess_note, excess_share = _frame_excess(fs_i, fs_j, ra, rb, names, settings.deep.frame_shear_tolerance, U)
    refused = (stm_status == "not-modelled")
    for k in np.flatnonzero(refused):
        why = res.reason.iat[k]
        note[chunk[k]] = why + (f"; give {U.col('face_i_mm')} / {U.col('face_j_mm')} (node to face: half the support's "
                                f"width) or [deep] {U.col('bearing_mm')}" if "no bearing length" in why else "")
    frame = np.isin(stm_status, ("designed", "resize")) & whole & (excess_note != "")
    note[chunk[frame]] = excess_note[frame]
    kept = np.isin(stm_status, ("designed", "resize")) & ~frame

    # per station of these members: inside a model (a member has at most two), torsion there
    ext0 = np.full((2, len(chunk)), np.nan)
    ext1 = np.full((2, len(chunk)), np.nan)
    slot = (models.model == "j").to_numpy().astype(int)
    ext0[slot, m_of] = models.extent_start_mm.to_numpy()
    ext1[slot, m_of] = models.extent_end_mm.to_numpy()
    kl = local[gm]
    xs = rs.x_clear[sel]
    with np.errstate(invalid="ignore"):
        in_model = (((xs >= ext0[0, kl] - 1e-6) & (xs <= ext1[0, kl] + 1e-6))
                    | ((xs >= ext0[1, kl] - 1e-6) & (xs <= ext1[1, kl] + 1e-6)))
    twist = dem.torsion[sel] & in_model & kept[kl]
    for k in np.unique(kl[twist]):
        x0 = xs[twist & (kl == k)][0]
        note[chunk[k]] = (f"torsion above the threshold of 22.7.4.1 at x = {x0:,.0f} mm, inside the strut-and-tie "
                          "region: torsion in a deep member is not designed here")
        kept[k] = False
    on = in_model & kept[kl]
    mc = chunk[kl]
    per_station["station"][sel] = on
    per_station["s_max"][sel] = np.where(on, stm_code.deep_beam_max_spacing(g.d[mc], u), np.inf)
    per_station["phi_vn_deep"][sel] = np.where(on, stm_code.deep_beam_shear_limit(sec.fc[mc], sec.b[mc], g.d[mc], u),
                                               np.nan)
    per_station["av_req"][sel] = np.where(on, stm_code.deep_beam_min_distributed(sec.b[mc]), 0.0)
    model_cols = models.to_dict("list")  # plain lists, each member's rows (one or two models) gathered below
    rows_of: dict[str, list[int]] = {}
    for i, name in enumerate(model_cols["member"]):
        rows_of.setdefault(name, []).append(i)
    by_member = {name: {k: [v[i] for i in at] for k, v in model_cols.items()} for name, at in rows_of.items()}
    recs = [SimpleNamespace(**rec) for rec in res.to_dict("records")]
    rows = [_summary_row(chunk[k], mb, recs[k], by_member[mb.names[chunk[k]]], whole[k], excess_share[k],
                         tension[:, k].max(initial=0.0), compression[k], lb_i[k], lb_j[k], full_i[k], full_j[k],
                         settings) for k in np.flatnonzero(kept)]
    if not rows:
        return None
    summary = pd.DataFrame(rows).set_index("position")
    kept_model = kept[m_of]  # the models' rows are in model order

    def of_kept(df: pd.DataFrame) -> pd.DataFrame:  # the rows of the kept members' models
        return df if kept.all() else df[kept_model[df["model_index"].to_numpy()]]

    ties = of_kept(units.si_keyed(r.ties))
    _stirrup_ties(ties[ties.kind == "vertical tie"], mb, rs, per_station)
    tables = {"members": r.members[kept].rename(columns={"method": "models"}).merge(  # r.members: in chunk order
        summary[["member", "method", "message", "tie_text", "web_text", "assumptions"]], on="member", how="left")}
    for name in TABLES[1:]:
        tables[name] = of_kept(getattr(r, name)).drop(columns=["model_index", "el_index", "node_slot"],
                                                        errors="ignore")
    return summary, tables


def _frame_excess(fs_i, fs_j, ra, rb, names, tolerance: float, U):
    """Per member: why a whole-member model is refused ('' where it is not) and the largest
    share by which the frame's face shear exceeds the simple-span reaction (0 if never)."""
    nc = fs_i.shape[1]
    note = np.full(nc, "", object)
    share = np.zeros(nc)
    for end, fs, r in (("i", fs_i, ra), ("j", fs_j, rb)):
        with np.errstate(invalid="ignore", divide="ignore"):
            rel = np.where(r > 0, (fs - r) / r, np.where(fs > U.per_force, np.inf, 0.0))
        worst = rel.max(axis=0, initial=0.0) if len(rel) else np.zeros(nc)
        share = np.maximum(share, np.clip(worst, 0.0, None))
        over = (fs - r > tolerance * np.abs(r) + U.per_force)  # and 1 kN | 1 kip
        for k in np.flatnonzero(over.any(axis=0)):
            c = int(np.argmax(np.where(over[:, k], fs[:, k] - r[:, k], -np.inf)))
            if not note[k]:
                note[k] = (f"frame action: in {names[c]} the frame's shear at the face of end {end} is "
                           f"{fs[c, k] / U.per_force:,.0f} {U.force}, above the {r[c, k] / U.per_force:,.0f} {U.force} "
                           "the simply supported truss "
                           f"carries there by more than {tolerance:.0%} (end moments or lateral load): the automatic "
                           "truss does not model restrained ends; model by hand, or raise [deep] frame_shear_tolerance")
    return note, share


def _summary_row(m, mb, r_m, mine, whole, excess, tension, compression, lb_i, lb_j, full_i, full_j, settings) -> dict:
    """One modelled member: its method, the tie and web bars as text, and what was assumed.
    ``mine``: its models' columns as plain lists (a member has one or two models)."""
    g = mb.geo
    U = unit_system(settings)
    L, F, A = U.length, U.force, U.area
    nd = 0 if U.name == "si" else 1  # lengths in text: whole mm, in to 0.1
    joined = not whole
    method = METHOD_JOINED if joined else METHOD_STM
    said = []
    end_bearing = []
    for end, lb, full, sup in (("i", lb_i, full_i, g.support_i[m]), ("j", lb_j, full_j, g.support_j[m])):
        used = whole or end in mine["model"]
        if not used:
            continue
        src = (f"[deep] {U.col('bearing_mm')} = {settings.deep.bearing:g}" if settings.deep.bearing > 0
               else f"twice the {(g.face_i if end == 'i' else g.face_j)[m]:,.{nd + 1}f} {L} face offset")
        end_bearing.append(f"bearing {end} ({sup}) {lb:,.{nd}f} {L}" + ("" if lb == full else f" of {full:,.{nd}f} {L}")
                           + f" ({src}" + (f", at most {settings.deep.bearing_max_h:g}h" if lb < full else "") + ")")
    said.append("; ".join(end_bearing))
    if whole:
        said.append("simply supported on its bearings: the frame's face shears are within "
                    f"{settings.deep.frame_shear_tolerance:.0%} of the truss reactions in every combination"
                    + (f" (at most {excess:.1%} above)" if excess > 0 else ""))
    else:
        extents = ", ".join(f"end region {e} to x = {x1:,.{nd}f} {L}" if e == "i" else
                            f"end region {e} from x = {x0:,.{nd}f} {L}" for e, x0, x1 in
                            zip(mine["model"], mine["extent_start_mm"], mine["extent_end_mm"]))
        said.append(f"{extents} from the frame's shear at the face; sectional design elsewhere; the 9.9.3.1 web "
                    "reinforcement is given over the region (9.9.1.1 names the whole member a deep beam: confirm "
                    "its extent)")
    said.append("zero moment at the bearings (a restrained end's hogging moment is for the top bars of the "
                "flexural design, not checked here); the fit of the tie bars in the section is not checked")
    if tension > 0:
        said.append(f"axial tension up to {tension / U.per_force:,.0f} {F} added to the bottom tie")
    if compression > 0:
        said.append(f"axial compression up to {compression / U.per_force:,.0f} {F} added to the top chord (at most "
                    f"{settings.deep.compression_limit:g} f'c Ag)")
    anch = []
    for end in ("i", "j"):
        how = [h for h in mine[f"anchorage_{end}"] if h]
        if how:
            anch.append(f"{how[0]} at {end}")
    area = int(r_m.tie_bars) * stm.tie_bars(edition(settings))[r_m.tie_bar][1]
    tie_text = f"{int(r_m.tie_bars)} {r_m.tie_bar} ({area:,.{0 if U.name == 'si' else 2}f} {A}" \
               + (", " + ", ".join(anch) if anch else "") + ")"
    web_text = (f"{r_m.web_bar} at {r_m.web_bar_spacing_mm:g} {L} each face ({int(r_m.web_bars_per_layer)} per layer), "
                f"Ah/s {r_m.ah_s_prov:.{2 if U.name == 'si' else 4}f} >= {r_m.ah_s_req:.{2 if U.name == 'si' else 4}f} "
                f"{A}/{L}")
    assumptions = "; ".join(s for s in said if s)
    model_text = str(r_m.method)
    msg = f"designed by strut-and-tie ({model_text}): {assumptions}"
    if r_m.status == "resize":
        msg = f"strut-and-tie ({model_text}): {r_m.reason}; {assumptions}"
    return dict(position=m, member=mb.names[m], stm_status=r_m.status, method=method, message=msg,
                assumptions=assumptions, model_text=model_text, utilization=float(r_m.utilization),
                governing=r_m.governing, governing_clause=r_m.governing_clause,
                governing_combination=r_m.governing_combination, tie_as_req_mm2=float(r_m.tie_as_req_mm2),
                tie_text=tie_text, web_text=web_text, vu_kN=float(max(mine["vu_kN"])),
                phi_vn_deep_kN=float(mine["phi_vn_deep_kN"][0]), whole=whole,
                ends=("i" if whole or "i" in mine["model"] else "") + ("j" if whole or "j" in mine["model"] else ""))


def _stirrup_ties(vt: pd.DataFrame, mb, rs, per_station) -> None:
    """Per station, the largest Av/s of the stirrup ties whose spread covers it (23.7.2) on
    top of the 9.9.3.1 minimum, and the combination of the governing tie."""
    if not len(vt):
        return
    grid = rs.grid
    pos = {name: k for k, name in enumerate(mb.names)}
    m = vt.member.map(pos).to_numpy()
    span = float(rs.x_clear.max(initial=0.0) * 2 + 1e3)
    skey = grid.member * span + rs.x_clear  # sorted: stations run by member, then x
    lo = np.searchsorted(skey, m * span + vt.zone_start_mm.to_numpy() - 1e-6, "left")
    hi = np.searchsorted(skey, m * span + vt.zone_end_mm.to_numpy() + 1e-6, "right")
    counts = np.clip(hi - lo, 0, None)
    idx = np.repeat(lo, counts) + (np.arange(counts.sum()) - np.repeat(np.cumsum(counts) - counts, counts))
    av = np.repeat(vt.av_s_req.to_numpy(float), counts)
    which = np.repeat(np.arange(len(vt)), counts)
    inside = per_station["station"][idx]
    idx, av, which = idx[inside], av[inside], which[inside]
    np.maximum.at(per_station["av_tie"], idx, av)
    gov = av >= per_station["av_tie"][idx] * (1 - 1e-12)
    per_station["tie_combination"][idx[gov]] = vt.combination.to_numpy(object)[which[gov]]
    per_station["av_req"][:] = np.maximum(per_station["av_req"], per_station["av_tie"])
    minimum_governs = per_station["av_tie"] < per_station["av_req"] * (1 - 1e-12)
    per_station["tie_combination"][minimum_governs] = ""


def allowed_spacing(reg: Regions, legs: np.ndarray, area: float, module: float) -> np.ndarray:
    """Per station of the regions, the largest spacing on the module a (bar, legs) option may
    have: legs x area / (Av/s the model needs), at most min(d/5, 300 mm) (9.9.3.1, 9.9.4.3,
    23.7.2); inf outside the regions."""
    with np.errstate(divide="ignore"):
        s = np.where(reg.station, np.minimum(legs * area / np.where(reg.av_req > 0, reg.av_req, np.nan), reg.s_max),
                     np.inf)
    s = np.where(np.isnan(s), reg.s_max, s)
    return detailing.floor_to_module(s, module)


def check(reg: Regions, prov, names: np.ndarray, rs, settings: Settings) -> np.ndarray:
    """The self-check over the regions: at every station of a laid-out member inside a model,
    the stirrups around it give Av/s at least what the model needs there and are at most
    min(d/5, 300 mm) apart. Returns the utilization per station (Av/s needed over provided;
    0 outside the regions); raises SelfCheckError where it fails."""
    on = reg.station & prov.on
    with np.errstate(divide="ignore", invalid="ignore"):
        av_prov = np.where(np.isfinite(prov.spacing), prov.legs * prov.area / prov.spacing, 0.0)
        util = np.where(on, np.where(av_prov > 0, reg.av_req / av_prov, np.inf), 0.0)
    bad = on & ((util > 1.0 + 1e-9) | (prov.spacing > reg.s_max * (1 + 1e-9)))
    if bad.any():
        k = int(np.flatnonzero(bad)[0])
        L, A = unit_system(settings).length, unit_system(settings).area
        raise SelfCheckError(f"layout of member {names[rs.grid.member[k]]} fails its strut-and-tie self-check at "
                             f"x = {rs.x_clear[k]:g} {L} (Av/s {av_prov[k]:.4f} against {reg.av_req[k]:.4f} {A}/{L}, "
                             f"s = {prov.spacing[k]:g} {L}, s_max = {reg.s_max[k]:g} {L})")
    return util


def station_columns(reg: Regions, columns: dict, util: np.ndarray, bw: np.ndarray, per_force: float) -> dict:
    """The station trace over the regions: the model's Av/s in place of the sectional demand,
    the 9.9.4.3 spacing limit, the 9.9.2.1 limit, and the utilization of the stirrups against
    the model; the sectional capacities do not apply there (NaN). Adds ``stm_region``."""
    r = reg.station
    if not r.any():
        return {**columns, "stm_region": r}
    out = dict(columns)
    for key in ("av_s_req", "av_s_env"):
        out[key] = np.where(r, reg.av_req, columns[key])
    out["av_min_s"] = np.where(r, stm_code.deep_beam_min_distributed(bw), columns["av_min_s"])
    out["at_s_req"] = np.where(r, 0.0, columns["at_s_req"])
    out["at_s_env"] = np.where(r, 0.0, columns["at_s_env"])
    out["avmin_required"] = np.where(r, True, columns["avmin_required"])
    out["s_max_mm"] = np.where(r, reg.s_max, columns["s_max_mm"])
    out["phi_vn_limit_kN"] = np.where(r, reg.phi_vn_deep / per_force, columns["phi_vn_limit_kN"])
    for key in ("phi_vc_kN", "phi_vn_kN", "avmin_threshold_kN"):
        out[key] = np.where(r, np.nan, columns[key])
    out["utilization"] = np.where(r, util, columns["utilization"])
    out["stm_region"] = r
    return out


def records(reg: Regions, rows: list[dict], lay, util: np.ndarray, rs, settings: Settings) -> list[dict]:
    """The members.csv rows of the flagged members: status, message and method from this
    step; for modelled members the utilization, governing combination and limits of the
    governing check (the model, the stirrups of its region, or the sectional part), the
    tie steel and the web bars. Every other row gains ``method``."""
    grid = rs.grid
    U = unit_system(settings)
    for m, row in enumerate(rows):
        if not reg.flagged[m]:  # sectional, unless a bracket that no method designs
            row["method"] = None if row["status"] == "deep-beam" else METHOD_SECTIONAL
            continue
        row["method"] = reg.method[m] or None
        if reg.status[m] == "deep-beam":
            row.update(status="deep-beam", message=reg.message[m], method=None)
            continue
        s = reg.summary.loc[m]
        sl = slice(grid.offsets[m], grid.offsets[m + 1])
        u_region = float(util[sl].max(initial=0.0))
        u_stm = float(s.utilization)
        sectional = s.method == METHOD_JOINED and lay.option[m] >= 0
        u_sect = float(row["utilization"]) if sectional and row["utilization"] is not None else 0.0
        row.update(tie_as_req_mm2=round(float(s.tie_as_req_mm2), 0 if U.name == "si" else 2), tie_bars=s.tie_text,
                   web_bars=s.web_text)
        for end, k in (("i", 0), ("j", 1)):
            if end in s.ends:
                row[f"vu_design_{end}_kN"] = round(float(reg.face_shear[k, m]) / U.per_force, 2)
                row[f"crit_{end}"] = "face"
        if s.stm_status == "resize":
            row.update(status="resize", message=s.message, utilization=round(u_stm, 3),
                       governing_case=s.governing_combination or "all combinations", phi_vn_limit_kN=round(s.phi_vn_deep_kN, 2),
                       phi_vc_kN=None, vc_equation=None, x_governing_mm=None, vu_kN=round(s.vu_kN, 2), nu_kN=None,
                       tu_kNm=None, stirrups_total=0, stirrup_mass_kg=0.0)
            continue
        if lay.option[m] < 0:  # the set-out or the sectional part failed: the row says why
            row.update(status="resize", message=f"{row['message']}; {s.message}")
            continue
        worst = max(u_stm, u_region, u_sect)
        msg = s.message
        if row.get("message"):
            msg = f"{msg}; {row['message']}"
        row.update(status="designed", message=msg, utilization=round(worst, 3))
        if worst == u_sect and u_sect > max(u_stm, u_region):
            continue  # the sectional part governs: its columns stand
        if u_region >= u_stm:
            k = grid.offsets[m] + int(np.argmax(util[sl]))
            comb = reg.tie_combination[k]
            row.update(governing_case=comb or "9.9.3.1 minimum (every combination)",
                       x_governing_mm=round(float(rs.x_clear[k]), settings.detailing.position_decimals))
        else:
            row.update(governing_case=s.governing_combination or "all combinations", x_governing_mm=None)
        row.update(phi_vn_limit_kN=round(s.phi_vn_deep_kN, 2), phi_vc_kN=None, vc_equation=None,
                   vu_kN=round(s.vu_kN, 2), nu_kN=None, tu_kNm=None)
    return rows

