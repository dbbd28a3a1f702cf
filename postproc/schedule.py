"""Beam marks and the bar schedule a detailer builds from.

Members with the same section, materials and stirrup layout share a mark, so each
mark is drawn once. Members designed by strut-and-tie also list their bottom-tie bars and
horizontal web bars (``strut_and_tie_bars``), and share a mark only with members whose
tie and web bars are the same. With ``envelope`` the members of one group label that share
section, materials and clear span take the most demanding layout among them that
satisfies every one of them at every station (checked against each member's stored
demand); where none does, they keep their own layouts. Mark numbers carry over from
the latest earlier run of the store for every mark whose signature is unchanged.

Tables are in the run's unit system (``A_mm`` or ``A_in``, ``mass_kg`` or ``weight_lb``:
postproc.units), bars and hooks those of its edition.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from postproc import detailing, units
from postproc.codes.aci318_19 import edition
from postproc.govern import design_table, layout_text
from postproc.pipeline.deep import bearing_lengths, stored
from postproc.settings import Detailing, settings_from_dict
from postproc.stm import tie_bars
from postproc.store import DamagedRun, Run, Store

SECTION_KEYS = ["b_mm", "h_mm", "d_mm", "bf_mm", "hf_mm", "fc_mpa", "fyt_mpa"]  # SI names (units.col for the run's)
ZONE_KEYS = ["start_mm", "end_mm", "bar", "legs", "spacing_mm", "count"]


@dataclass
class Schedule:
    marks: pd.DataFrame  # one row per mark
    members: pd.DataFrame  # member -> mark and the layout it is built with
    bars: pd.DataFrame  # one row per member x bar shape
    by_level: pd.DataFrame
    by_bar: pd.DataFrame

    def write(self, out: Path) -> list[Path]:
        out.mkdir(parents=True, exist_ok=True)
        paths = []
        for name in ("marks", "members", "bars", "by_level", "by_bar"):
            df = getattr(self, name)
            for ext in ("csv", "parquet"):
                p = out / f"schedule_{name}.{ext}"
                tmp = p.with_name(f".{p.name}.tmp")
                if ext == "csv":  # converted section values read as given: 19.685 in, not 19.6850393...
                    shown = df.round({c: 3 for c in units.system_of(df.columns).cols(SECTION_KEYS) if c in df})
                    shown.to_csv(tmp, index=False, lineterminator="\n")
                else:
                    pq.write_table(pa.Table.from_pandas(df, preserve_index=False), tmp)
                tmp.replace(p)
                paths.append(p)
        return paths


COLUMN_KEYS = ["diameter_mm", "cover_mm", "db_long_mm", "n_long"]  # and a column's: what shapes its ties (SI names)


def _signature(section: pd.Series, zones: pd.DataFrame, col, nd: int = 1, bars: str = "") -> str:
    num = lambda v: None if pd.isna(v) else round(float(v), nd)  # noqa: E731
    sec = [num(section.get(col(k))) for k in SECTION_KEYS]
    lay = [[None if pd.isna(v) else (round(float(v), nd) if isinstance(v, (int, float, np.number)) else v)
            for v in row] for row in zones[[col(k) for k in ZONE_KEYS]].itertuples(index=False)]
    kinds = zones["kind"].tolist() if "kind" in zones else []
    if section.get("kind") == "column":  # ties, hoops or a spiral, their legs each way, and the bars they tie
        legs_vb = zones["legs_vb"].tolist() if "legs_vb" in zones else [None] * len(lay)
        lay = [row + [k, num(lb)] for row, k, lb in zip(lay, kinds, legs_vb)]
        return json.dumps([["column", *sec, *(num(section.get(col(k))) for k in COLUMN_KEYS)], lay])
    lay = [row + ["hoop"] if k == "hoop" else row for row, k in zip(lay, kinds)] if kinds else lay  # hoops differ
    return json.dumps([sec, lay, bars] if bars else [sec, lay])


def _longitudinal_bar(member, mark, level, shape: str, bar: str, length: float, hooks: int, count: int, u) -> dict:
    """A straight bar of out-to-out length ``length`` (mm or in) with ``hooks`` standard 90-degree
    hooks: tail 12 db, inside bend diameter 6 db to #25 | #8 and 8 db for #29 to #36 | #9 to #11
    (Table 25.3.1, from memory); cut length on the centreline."""
    db, area = tie_bars(u)[bar]
    D = 6.0 * db if db <= (25.4 if u.units == "si" else 1.0) + 1e-9 else 8.0 * db
    r = D / 2 + db / 2
    tail = 12.0 * db
    cut = length - hooks * (r + db / 2) + hooks * (np.pi * r / 2 + tail)
    unit = cut * area * detailing.steel_density(u)
    dims, cut_nd = (1, 0) if u.units == "si" else (2, 1)  # as the stirrups' rows
    return {"member": member, "mark": mark, "level": level, "shape": shape, "bar": bar, "A_mm": round(length, dims),
            "B_mm": round(tail + r + db / 2, dims) if hooks else 0.0, "hook_mm": round(tail, dims) if hooks else 0.0,
            "bend_diameter_mm": round(D, dims) if hooks else 0.0, "cut_length_mm": round(cut, cut_nd),
            "count": int(count), "unit_mass_kg": round(unit, 3), "mass_kg": round(unit * count, 2)}


STRUT_AND_TIE_SHAPES = ("bottom tie", "web bars")  # the longitudinal bars strut_and_tie_bars lists


def is_strut_and_tie_bar(bars: pd.DataFrame) -> np.ndarray:
    """The rows of a bars table that are strut-and-tie ties and web bars (not stirrups, hoops or ties)."""
    return bars["shape"].astype(str).str.startswith(STRUT_AND_TIE_SHAPES).to_numpy()


def strut_and_tie_bars(run: Run, members: list[str], marks: dict[str, str]) -> list[dict]:
    """Bar rows of the bottom ties and horizontal web bars of members designed by strut-and-tie.

    The tie bars run from the end cover at each bearing the model uses (the member ends at the
    support's far face) with the hooks the anchorage check chose; an end region's bars run on
    past the region's boundary by ld (Table 25.4.2.3, the tie force there being developed in
    the sectional part), not beyond the far end. The web bars, one on each face per layer,
    run the same length straight; their layers fill the depth between the tie and the top
    bars (taken at the same distance from the top) at the spacing found (9.9.4.3). Not
    scheduled: the top bars over the supports and any anchorage of the web bars into the
    supports (the flexural design's)."""
    if not members:
        return []
    models, summary = stored(run, "models"), stored(run, "members")
    if "member" not in models or not len(models):
        return []
    U = run.units
    u = edition(U.name)
    inputs = units.si_keyed(run.members().to_pandas()).set_index("member")  # values in the run's units
    cfg = settings_from_dict(run.manifest().get("settings", {}))
    deep = cfg.deep
    rows = []
    for m in members:
        mine, s = models[models.member == m], summary[summary.member == m]
        if not len(mine) or not len(s):
            continue
        g, s = inputs.loc[m], s.iloc[0]
        ln = g.length_m * U.per_span - g.face_i_mm - g.face_j_mm
        _, ext_i = bearing_lengths(g.face_i_mm, g.h_mm, cfg)
        _, ext_j = bearing_lengths(g.face_j_mm, g.h_mm, cfg)
        lo, hi = -float(ext_i) + deep.end_cover, ln + float(ext_j) - deep.end_cover
        for t in mine.itertuples():
            if t.model == "whole":
                a, b, hooks = lo, hi, int(t.anchorage_i == "standard hook") + int(t.anchorage_j == "standard hook")
            elif t.model == "i":
                a, b, hooks = lo, min(t.extent_end_mm + t.ld_mm, hi), int(t.anchorage_i == "standard hook")
            else:
                a, b, hooks = max(t.extent_start_mm - t.ld_mm, lo), hi, int(t.anchorage_j == "standard hook")
            where = "" if t.model == "whole" else f", end region {t.model}"
            tie_shape, web_shape = (f"{shape}{where}" for shape in STRUT_AND_TIE_SHAPES)
            rows.append(_longitudinal_bar(m, marks.get(m, ""), g.level, tie_shape, t.tie_bar, b - a, hooks,
                                          t.tie_bars, u))
            layers = max(int(np.ceil((2 * g.d_mm - g.h_mm) / s.web_bar_spacing_mm)) - 1, 1)
            rows.append(_longitudinal_bar(m, marks.get(m, ""), g.level, web_shape, s.web_bar, b - a, 0,
                                          layers * int(s.web_bars_per_layer), u))
    return rows


def _satisfies(zones: pd.DataFrame, positions: np.ndarray, st: pd.DataFrame, clear_span: float, settings: Detailing,
               col) -> bool:
    """Does a layout (its zones and stirrup positions) meet a member's stored demand at every
    station? The gap around each station against the largest Av/s and, per leg, At/s over
    the combinations, s_max and Av,min (conservative: the envelopes of separate combinations)."""
    bar = next((b for b in zones.bar if b), None)
    area = settings.bars[bar][1] if bar else 0.0
    legs = int(zones.legs.max())
    x = st[col("x_mm")].to_numpy(float)
    sides = detailing.jump_sides(np.zeros(len(x), int), x, st.side.to_numpy())
    s = detailing.provided_spacing(positions, x, clear_span, sides)
    with np.errstate(divide="ignore"):
        per_leg = np.where(np.isfinite(s), area / s, 0.0)
    need = st.av_s_env.to_numpy() / max(legs, 1) + st.at_s_env.to_numpy()
    ok = per_leg * (1 + 1e-9) >= need
    ok &= np.where(np.isfinite(s), s <= st[col("s_max_mm")].to_numpy() * (1 + 1e-9), ~st.avmin_required.to_numpy())
    ok &= ~st.avmin_required.to_numpy() | (legs * per_leg * (1 + 1e-9) >= st.av_min_s.to_numpy())
    return bool(ok.all())


def build(run: Run, settings: Detailing, envelope: bool = False, previous: Schedule | None = None) -> Schedule:
    U = run.units
    u, col, nd = edition(U.name), U.col, settings.position_decimals
    res = design_table(run, "members").set_index("member")
    method = res["method"] if "method" in res else pd.Series("", index=res.index)
    stm_bars = {m: f"{res.tie_bars[m]} | {res.web_bars[m]}" for m in res.index
                if isinstance(method[m], str) and method[m].startswith("strut-and-tie")}
    zones = design_table(run, "zones")
    inputs = run.members().to_pandas().set_index("member")
    designed = res.index[res.status == "designed"]
    zones = zones[zones.member.isin(designed)]
    zmap = {m: g.sort_values("zone").reset_index(drop=True) for m, g in zones.groupby("member")}
    layout_of = {m: m for m in designed}  # member -> member whose layout it is built with

    if envelope:
        st = design_table(run, "stations").sort_values(["member", col("x_mm"), "side"], kind="stable")
        st_map = {m: g for m, g in st[st.member.isin(designed)].groupby("member")}
        pos = design_table(run, "stirrups")
        pos_map = {m: np.sort(g[col("x_mm")].to_numpy(float)) for m, g in pos.groupby("member")}
        torsion = set(st.member[st.torsion])
        clear = inputs[col("length_m")] * U.per_span - inputs[col("face_i_mm")] - inputs[col("face_j_mm")]
        span = clear.round(0)
        info = inputs.loc[designed].assign(span=span.loc[designed], bars=[stm_bars.get(m, "") for m in designed])
        by = ["group", *U.cols(SECTION_KEYS), "span", "bars"] + (["frame"] if "frame" in info else [])  # hoops only with hoops
        for _, grp in info.groupby(by, dropna=False):
            names = list(grp.index)
            if len(names) < 2:
                continue
            order = sorted(names, key=lambda m: (-res.stirrups_total[m], m))  # most demanding first
            same_bar = lambda c, m: m not in torsion or zmap[c].bar.iloc[0] == zmap[m].bar.iloc[0]
            fits = lambda c, m: (_satisfies_column(zmap[c], zmap[m], pos_map.get(c, np.empty(0)), st_map[m],  # noqa
                                                   float(clear[m]), settings, col)
                                 if inputs.kind[m] == "column" else
                                 same_bar(c, m) and _satisfies(zmap[c], pos_map.get(c, np.empty(0)), st_map[m],
                                                               float(clear[m]), settings, col))
            for cand in order:
                if all(fits(cand, m) for m in names):
                    for m in names:
                        layout_of[m] = cand
                    break

    prev = {} if previous is None else dict(zip(previous.marks.signature, previous.marks.mark))
    sig_of = {m: _signature(inputs.loc[m], zmap[layout_of[m]], col, nd, stm_bars.get(m, "")) for m in designed}
    groups: dict[str, list[str]] = {}
    for m in designed:
        groups.setdefault(sig_of[m], []).append(m)
    used = {int(v[1:]) for v in prev.values()}
    next_no = max(used, default=0) + 1
    mark_of_sig = {}
    for sig in sorted(groups, key=lambda s: sorted(groups[s])[0]):
        if sig in prev:
            mark_of_sig[sig] = prev[sig]
        else:
            mark_of_sig[sig] = f"M{next_no:03d}"
            next_no += 1

    mark_rows, member_rows, bar_rows = [], [], []
    for sig, names in groups.items():
        names = sorted(names)
        first = names[0]
        z = zmap[layout_of[first]]
        sec = inputs.loc[first]
        mark_rows.append({"mark": mark_of_sig[sig], "members": " ".join(names), "member_count": len(names),
                          "b_mm": sec[col("b_mm")], "h_mm": sec[col("h_mm")], "fc_mpa": sec[col("fc_mpa")],
                          "fyt_mpa": sec[col("fyt_mpa")], "layout": layout_text(z),
                          "sets_per_member": int(z["count"].sum()), "signature": sig,
                          "tie_and_web_bars": stm_bars.get(first, ""),
                          # added at the end: beam or column, and a circular column's diameter
                          "kind": sec.get("kind", "beam"), "diameter_mm": sec.get(col("diameter_mm"))})
    marks = pd.DataFrame(mark_rows).sort_values("mark").reset_index(drop=True)
    stations_torsion = _torsion_members(run) if settings.stirrup_shape == "open" else set()
    for m in sorted(designed):
        src = layout_of[m]
        z = zmap[src]
        sec = inputs.loc[m]
        mark = mark_of_sig[sig_of[m]]
        al = res[col("al_torsion_mm2")][m] if col("al_torsion_mm2") in res else None
        member_rows.append({"member": m, "mark": mark, "level": sec.level, "group": sec.group,
                            "layout_from": src, "layout": layout_text(z),
                            # longitudinal torsion steel to add to the flexural bars (22.7.6.1, 9.6.4.3)
                            "al_torsion_mm2": None if al is None or pd.isna(al) else float(al)})
        sets = int(z["count"].sum())
        if not sets:
            continue
        bar = next(b for b in z.bar if b)
        legs = int(z.legs.max())
        frame = sec.get("frame", "none") in ("special", "intermediate")  # closed, seismic hooks (18.6.4, 18.4.2)
        closed = settings.stirrup_shape == "closed" or m in stations_torsion or frame
        hoops = int(z.loc[z["kind"] == "hoop", "count"].sum()) if "kind" in z else 0
        b, h = sec[col("b_mm")], sec[col("h_mm")]
        if sec.get("kind") == "column":
            shapes = _column_shapes(sec, z, bar, settings, col, u)
        else:
            shapes = [(sh, sets - hoops) for sh in detailing.stirrup_set(b, h, settings.clear_cover, bar, legs, closed,
                                                                         settings.open_hook_deg, u)]
            shapes += [(sh, hoops) for sh in detailing.hoop_set(b, h, settings.clear_cover, bar, legs, u)]
        dims, cut_nd = (1, 0) if U.name == "si" else (2, 1)  # mm to 0.1 and cut lengths whole; in to 0.01 and 0.1
        for shape, n_sets in shapes:
            if not n_sets:
                continue
            count = n_sets * shape.per_set
            unit = shape.cut_length * settings.bars[bar][1] * detailing.steel_density(u)
            bar_rows.append({"member": m, "mark": mark, "level": sec.level, "shape": shape.name, "bar": bar,
                             "A_mm": round(shape.A, dims), "B_mm": round(shape.B, dims),
                             "hook_mm": round(shape.hook, dims), "bend_diameter_mm": round(shape.bend_diameter, dims),
                             "cut_length_mm": round(shape.cut_length, cut_nd), "count": count,
                             "unit_mass_kg": round(unit, 3), "mass_kg": round(unit * count, 2)})
    mark_of = {m: mark_of_sig[sig_of[m]] for m in designed}
    bar_rows += strut_and_tie_bars(run, sorted(m for m in designed if m in stm_bars), mark_of)
    bars = pd.DataFrame(bar_rows, columns=["member", "mark", "level", "shape", "bar", "A_mm", "B_mm", "hook_mm",
                                           "bend_diameter_mm", "cut_length_mm", "count", "unit_mass_kg", "mass_kg"])
    per_mark = bars.groupby("mark").mass_kg.sum()
    marks["mass_kg"] = marks.mark.map(per_mark).fillna(0.0).round(2)
    agg = {"count": ("count", "sum"), "mass_kg": ("mass_kg", "sum")}
    by_level = bars.groupby("level", as_index=False).agg(**agg).round(2)
    by_bar = bars.groupby("bar", as_index=False).agg(**agg).round(2)
    named = lambda df: df.rename(columns=U.rename(df.columns))  # noqa: E731
    return Schedule(named(marks), named(pd.DataFrame(member_rows)), named(bars), named(by_level), named(by_bar))


def _column_shapes(sec: pd.Series, zones: pd.DataFrame, bar: str, settings: Detailing, col, u) -> list:
    """The bars of a column's ties and hoops, zone by zone (a hoop zone's perimeter bar is a hoop with
    seismic hooks, 25.3.4; a tie zone's a tie, Table 25.3.2), with their crossties (25.3.5), or its
    spiral (25.7.3), as (shape, sets). The clear cover to the ties is the bars' cover (face to bar
    centre) less half a bar and the tie bar, as the design took it."""
    circular = pd.notna(sec.get(col("diameter_mm")))
    b = sec[col("diameter_mm")] if circular else sec[col("b_mm")]
    h = sec[col("diameter_mm")] if circular else sec[col("h_mm")]
    edge = sec[col("cover_mm")] if pd.notna(sec[col("cover_mm")]) else h - sec[col("d_mm")]
    clear = max(edge - sec[col("db_long_mm")] / 2 - settings.bars[bar][0], 0.0)
    spacing = col("spacing_mm")
    out: dict[tuple, list] = {}
    for z in zones[zones["count"] > 0].to_dict("records"):
        if z["kind"] == "spiral":
            pitch = z[spacing] if pd.notna(z[spacing]) else h
            return [(detailing.spiral_shape(b, clear, bar, pitch, int(zones["count"].sum()), u), 1)]
        for shape in detailing.tie_set(b, h, clear, bar, int(z["legs"]), int(z["legs_vb"]), circular, z["kind"], u):
            out.setdefault((shape.name, round(shape.cut_length, 6)), [shape, 0])[1] += z["count"]
    return [(shape, sets) for shape, sets in out.values()]


def _satisfies_column(zones: pd.DataFrame, own: pd.DataFrame, positions: np.ndarray, st: pd.DataFrame,
                      clear_span: float, settings: Detailing, col) -> bool:
    """Do a column's ties (another column's layout) do for this one? The same bar, legs each way and
    kinds as its own layout, and at every station a gap no wider than the spacing its demand allows
    there for that choice (s_allowed_mm: shear in both directions, the spacing rules, confinement),
    the end ties within half of it from the faces (10.7.6.1.2, 10.7.6.1.3)."""
    key = lambda z: (tuple(z.bar[z["count"] > 0].unique()), int(z.legs.max()), int(z.legs_vb.max()),  # noqa: E731
                     tuple(sorted(set(z.kind[z["count"] > 0]))))
    if key(zones) != key(own) or not len(positions):
        return False
    x = st[col("x_mm")].to_numpy(float)
    sides = detailing.jump_sides(np.zeros(len(x), int), x, st.side.to_numpy())
    s = detailing.provided_spacing(positions, x, clear_span, sides)
    allowed = st[col("s_allowed_mm")].to_numpy(float)
    slack = settings.gap_slack
    return bool(np.all(s <= allowed * (1 + 1e-9)) and positions[0] <= allowed[0] / 2 + slack
                and clear_span - positions[-1] <= allowed[-1] / 2 + slack)


def _torsion_members(run: Run) -> set[str]:
    st = design_table(run, "stations", columns=["member", "torsion"])
    return set(st.member[st.torsion])


def previous_schedule(store: Store, run: Run, variant: str) -> Schedule | None:
    """The latest earlier run's stored schedule of the same variant, for stable mark numbers
    (damaged runs and schedules are passed over)."""
    created = run.manifest()["created"]
    earlier = []
    for r in store.intact_runs()[0]:
        if r.name != run.name and r.manifest()["created"] <= created:
            try:
                if r.sealed(f"schedule/{variant}") is not None:
                    earlier.append(r)
            except DamagedRun:
                continue
    earlier.sort(key=lambda r: (r.manifest()["created"], r.name))
    return load(earlier[-1], variant) if earlier else None


def load(run: Run, variant: str) -> Schedule:
    """A stored schedule, every file checked against its sealed listing."""
    folder = f"schedule/{variant}"
    listed = run.sealed(folder)
    read = lambda n: pq.read_table(pa.BufferReader(run.read_bytes(f"{folder}/schedule_{n}.parquet", listed))).to_pandas()
    return Schedule(read("marks"), read("members"), read("bars"), read("by_level"), read("by_bar"))


def for_run(store: Store, run: Run, settings: Detailing, envelope: bool) -> Schedule:
    """The run's schedule: built once and kept in the run (sealed, under the run's lock), then reused."""
    variant = "envelope" if envelope else "plain"
    if run.sealed(f"schedule/{variant}") is not None:
        return load(run, variant)
    sched = build(run, settings, envelope, previous_schedule(store, run, variant))
    store.add_sealed(run, f"schedule/{variant}", sched.write)
    return sched
