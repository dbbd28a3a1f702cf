"""Governing members of a designed run, and the differences between two runs."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from postproc import units
from postproc.store import Run, StoreError
from postproc.terms import NEEDS_ACTION, STATUSES

RANK_COLUMNS = ["rank", "member", "level", "group", "status", "utilization", "governing_case",
                "vu_design_i_kN", "vu_design_j_kN", "stirrups_total", "stirrup_mass_kg", "message",
                "kind", "vb_design_i_kN", "vb_design_j_kN"]  # SI names; kind (beam, column) and Vb added at the end


def design_table(run: Run, name: str, member: str | None = None, columns: list[str] | None = None) -> pd.DataFrame:
    """A table of a run's design folder (the station trace is a folder of parts)."""
    if not run.has_design():
        raise StoreError(f"run '{run.name}' has no design yet")
    rel = f"design/{name}" if name == "stations" else f"design/{name}.parquet"
    if name == "stations" and not run.listed_under(rel):  # the station trace of a run that designed nothing
        return pd.DataFrame(columns=columns or [])
    filters = None if member is None else [("member", "==", member)]
    return run.table(rel, columns=columns, filters=filters).to_pandas()


def results_with_labels(run: Run) -> pd.DataFrame:
    """Design results joined with the members' level and group labels."""
    res = design_table(run, "members")
    labels = run.members().select(["member", "level", "group", "kind"]).to_pandas()
    return res.merge(labels, on="member", how="left").fillna({"level": "", "group": "", "kind": ""})


def status_place(status: pd.Series) -> np.ndarray:
    """Review order of statuses: those needing action in the order of NEEDS_ACTION (resize,
    deep-beam, invalid, no-forces, no-geometry), then designed, then the rest (not-covered)."""
    action = {s: k for k, s in enumerate(NEEDS_ACTION)}
    return status.astype(str).map(lambda s: action.get(s, len(action) + (0 if s == "designed" else 1))).to_numpy()


def rank_order(members: pd.DataFrame) -> np.ndarray:
    """Row positions of ``members`` in review order: by status_place, then by utilization
    (the larger of Vu/phi*Vn provided and Vu over the section limit), highest first, then by id."""
    place = status_place(members["status"])
    util = -members["utilization"].astype(float).fillna(-np.inf).to_numpy()
    return np.lexsort((members["member"].astype(str).to_numpy(), util, place))


class UnknownFilter(ValueError):
    """A level or group asked for that no member of the run has, or a word that is not a
    status: the filter would select nothing, and an empty ranking reads as a run with
    nothing to review. (A status no member has is a fair question: an empty ranking.)"""

    def __init__(self, column: str, unknown: list[str], known: list[str]):
        self.column, self.unknown, self.known = column, unknown, known
        plural = "statuses" if column == "status" else f"{column}s"
        what = "not a status" if column == "status" else f"no member has that {column}"
        super().__init__(f"{', '.join(unknown)}: {what}; the {plural}: "
                         f"{', '.join(known[:30]) or 'none'}{' ...' if len(known) > 30 else ''}")


def rank(run: Run, levels=(), groups=(), statuses=(), top: int | None = None) -> pd.DataFrame:
    """Members ranked for review (see rank_order), filtered by level, group and status
    (UnknownFilter for a level or group no member has, or a word that is not a status)."""
    df = results_with_labels(run)
    for column, given in (("level", levels), ("group", groups), ("status", statuses)):
        wanted = [str(v) for v in ([given] if isinstance(given, str) else given or ())]  # "L1" is one level
        known = list(STATUSES) if column == "status" else sorted({str(v) for v in df[column].dropna() if str(v)})
        unknown = [v for v in wanted if v not in known]
        if unknown:
            raise UnknownFilter(column, unknown, known)
        if wanted:
            df = df[df[column].astype(str).isin(wanted)]
    df = df.iloc[rank_order(df)]
    if top:
        df = df.head(top)
    df.insert(0, "rank", np.arange(1, len(df) + 1))
    return df[run.units.cols(RANK_COLUMNS)].reset_index(drop=True)


def layout_text(zones: pd.DataFrame) -> str:
    """A member's zones as one line, e.g. '17 #10x2 @75 | 12 #10x2 @250 | 17 #10x2 @75' (spacings
    in mm, or in inches in an inch-pound run: '17 #3x2 @3 | ...'); hoop zones (frame beams,
    Chapter 18) say so: '11 hoops #10x3 @125'; a column's zones give its legs each way (parallel to
    h x parallel to b) and their kind: '8 #13 hoops 3x3 @100', '14 #10 ties 3x3 @200'."""
    spacing = units.system_of(zones.columns).col("spacing_mm")
    kinds = zones["kind"] if "kind" in zones else pd.Series("stirrup", index=zones.index)
    legs_vb = zones["legs_vb"] if "legs_vb" in zones else pd.Series(np.nan, index=zones.index)
    parts = []
    for count, bar, legs, s, kind, lvb in zip(zones["count"], zones["bar"], zones["legs"], zones[spacing], kinds,
                                              legs_vb):
        if not count:
            parts.append("none")
        elif pd.notna(lvb) and kind in ("tie", "hoop", "spiral"):  # a column
            at = f" @{s:g}" if pd.notna(s) else ""
            parts.append(f"{count} {bar} {kind}s {legs}x{int(lvb)}{at}" if kind != "spiral" else f"{bar} spiral{at}")
        else:
            hoops = "hoops " if kind == "hoop" else ""
            parts.append(f"{count} {hoops}{bar}x{legs}" + (f" @{s:g}" if pd.notna(s) else ""))
    return " | ".join(parts)


@dataclass
class Comparison:
    run_a: str
    run_b: str
    added: list[str]
    removed: list[str]
    status_changes: pd.DataFrame
    utilization_changes: pd.DataFrame
    layout_changes: pd.DataFrame
    demand_changes: pd.DataFrame
    stirrup_mass_a: float  # of the members designed in both runs, in the comparison's units: kg, or lb (units.mass)
    stirrup_mass_b: float
    newly_resize: list[str]
    units: units.UnitSystem = units.SI  # the one unit system both runs are compared in (run B's)
    note: str = ""  # how the runs were brought into one unit system, where they differ
    mass_left_out: list[str] = field(default_factory=list)  # members designed in one run only (their steel has no pair)

    def as_dict(self) -> dict:
        rec = lambda df: [{k: (None if isinstance(v, float) and np.isnan(v) else v) for k, v in r.items()}
                          for r in df.to_dict("records")]
        U = self.units
        out = {"run_a": self.run_a, "run_b": self.run_b, "added": self.added, "removed": self.removed,
               "status_changes": rec(self.status_changes), "utilization_changes": rec(self.utilization_changes),
               "layout_changes": rec(self.layout_changes), "demand_changes": rec(self.demand_changes),
               U.col("stirrup_mass_a_kg"): round(self.stirrup_mass_a, 1),
               U.col("stirrup_mass_b_kg"): round(self.stirrup_mass_b, 1),
               U.col("stirrup_mass_change_kg"): round(self.stirrup_mass_b - self.stirrup_mass_a, 1),
               "stirrup_mass_left_out": self.mass_left_out, "newly_resize": self.newly_resize}
        if U.name != "si" or self.note:
            out.update(units=U.name, units_note=self.note)
        return out


def compare(a: Run, b: Run, threshold: float = 0.02, vu_threshold: float = 0.05) -> Comparison:
    """What changed from run a to run b, member by member: utilization by more than
    ``threshold``, the design shear at either end by more than ``vu_threshold`` (relative).

    Runs in different unit systems are compared in one: run b's, run a's tables converted
    into it (design shears, masses, zone positions and spacings); their layouts differ by
    construction (bar sizes, spacing modules), and each is shown as it was designed, in its
    own units."""
    U = b.units
    note = "" if a.units == U else (f"run {a.name} is in {a.units.title} and run {b.name} in {U.title}; "
                                    f"compared in {U.title}, run {a.name}'s values converted")
    ma = units.convert_table(design_table(a, "members"), a.units, U).set_index("member")
    mb = design_table(b, "members").set_index("member")
    vu_i, vu_j, mass = U.col("vu_design_i_kN"), U.col("vu_design_j_kN"), U.col("stirrup_mass_kg")
    added = sorted(set(mb.index) - set(ma.index))
    removed = sorted(set(ma.index) - set(mb.index))
    both = sorted(set(ma.index) & set(mb.index))
    sa, sb = ma.loc[both, "status"], mb.loc[both, "status"]
    changed = sa != sb
    status_changes = pd.DataFrame({"member": np.asarray(both)[changed.to_numpy()], "status_a": sa[changed].to_numpy(),
                                   "status_b": sb[changed].to_numpy()})
    ua, ub = ma.loc[both, "utilization"].astype(float), mb.loc[both, "utilization"].astype(float)
    delta = ub - ua
    big = (delta.abs() > threshold) | (ua.isna() != ub.isna())
    util_changes = pd.DataFrame({"member": delta.index[big], "utilization_a": ua[big].to_numpy(),
                                 "utilization_b": ub[big].to_numpy(),
                                 "utilization_change": delta[big].round(3).to_numpy()})
    util_changes = util_changes.reindex(util_changes.utilization_change.abs().sort_values(ascending=False).index)

    za_own, zb = design_table(a, "zones"), design_table(b, "zones")
    za = units.convert_table(za_own, a.units, U)
    key = [c for c in U.cols(["zone", "start_mm", "end_mm", "bar", "legs", "spacing_mm", "count", "legs_vb"])
           if c in za.columns and c in zb.columns]  # runs of earlier versions have no legs_vb
    key += ["kind"] if "kind" in za and "kind" in zb else []
    own = "" if a.units == U else " (spacings in {})"  # each layout as it was designed, in its own units
    text_a = {m: layout_text(g) + own.format(a.units.length) for m, g in za_own.groupby("member")}
    text_b = {m: layout_text(g) + own.format(U.length) for m, g in zb.groupby("member")}
    sig = lambda z: {m: tuple(map(tuple, g[key].fillna(-1).to_numpy().tolist())) for m, g in z.groupby("member")}
    sig_a, sig_b = sig(za), sig(zb)
    rows = []
    for m in both:
        if sig_a.get(m) != sig_b.get(m):
            rows.append({"member": m, "layout_a": text_a.get(m, ""), "layout_b": text_b.get(m, ""),
                         "stirrup_mass_change_kg": round(float(mb[mass][m] - ma[mass][m]), 2)})
    layout_changes = pd.DataFrame(rows, columns=["member", "layout_a", "layout_b", "stirrup_mass_change_kg"])
    demand = []
    for m in both:
        va = ma.loc[m, [vu_i, vu_j]].astype(float).to_numpy()
        vb = mb.loc[m, [vu_i, vu_j]].astype(float).to_numpy()
        with np.errstate(invalid="ignore", divide="ignore"):
            rel = np.nanmax(np.abs(vb - va) / np.maximum(np.abs(va), 1e-9)) if np.isfinite(va).any() else np.nan
        if np.isfinite(rel) and rel > vu_threshold:
            demand.append({"member": m, "vu_i_a_kN": va[0], "vu_i_b_kN": vb[0], "vu_j_a_kN": va[1],
                           "vu_j_b_kN": vb[1], "vu_change_rel": round(float(rel), 3)})
    demand_changes = pd.DataFrame(demand, columns=["member", "vu_i_a_kN", "vu_i_b_kN", "vu_j_a_kN", "vu_j_b_kN",
                                                   "vu_change_rel"])
    was_resize = set(ma.index[ma.status == "resize"])
    newly = sorted(m for m in mb.index[mb.status == "resize"] if m not in was_resize)
    named = lambda df: df.rename(columns=U.rename(df.columns))  # noqa: E731
    # the totals pair the members designed in both runs: a member sent to resize has no stirrups, not fewer
    paired = sorted(set(ma.index[ma.status == "designed"]) & set(mb.index[mb.status == "designed"]))
    left_out = sorted((set(ma.index[ma.status == "designed"]) | set(mb.index[mb.status == "designed"])) - set(paired))
    return Comparison(a.name, b.name, added, removed, status_changes, util_changes.reset_index(drop=True),
                      named(layout_changes), named(demand_changes), float(ma.loc[paired, mass].sum()),
                      float(mb.loc[paired, mass].sum()), newly, U, note, mass_left_out=left_out)
