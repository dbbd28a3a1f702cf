"""One self-contained HTML file for a designed run: the members needing action, a
sortable index, an overview by level (a banded utilization strip per level and, where
the members carry coordinates, a plan per level) and, per member, the shear diagram
above the stirrup elevation.

The page skeleton is a jinja2 template (templates/, package data); everything is inline
(CSS, SVG, a little JavaScript for sorting and filtering) and nothing is fetched. The
drawings are built as strings from whole-run arrays: stations are grouped by member
once, scaled to pixels in one pass, and thinned to the points that change the picture
(the shear between loads is linear, and the stations are dense).

The run's tables are read under their SI keys (``units.si_keyed``) with the values in the
run's units, and every unit written on the page is the run's (kN or kip, mm or in).
"""

from __future__ import annotations

import functools
import itertools
import math
from html import escape
from pathlib import Path

import jinja2
import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pac
from markupsafe import Markup

from postproc import memory, units
from postproc.govern import rank_order, status_place
from postproc.pipeline import deep as deep_step
from postproc.report import CAUTION, write_atomic
from postproc.settings import settings_from_dict
from postproc.store import Run
from postproc.terms import NEEDS_ACTION, STATUSES, did_you_mean

STATION_COLUMNS = ["member", "x_mm", "vu_kN", "vu_max_kN", "phi_vc_kN", "phi_vn_kN", "phi_vn_limit_kN",
                   "avmin_threshold_kN", "spacing_mm",
                   # the shear parallel to b and the capacity-design shear of columns (NaN for beams)
                   "vb_max_kN", "phi_vc_vb_kN", "phi_vn_vb_kN", "phi_vn_limit_vb_kN", "avmin_threshold_vb_kN",
                   "ve_kN", "ve_vb_kN"]
# a column's second diagram draws its Vb series in the places of the V ones
VB_SERIES = {"vu_max_kN": "vb_max_kN", "phi_vc_kN": "phi_vc_vb_kN", "phi_vn_kN": "phi_vn_vb_kN",
             "phi_vn_limit_kN": "phi_vn_limit_vb_kN", "avmin_threshold_kN": "avmin_threshold_vb_kN",
             "ve_kN": "ve_vb_kN"}  # SI names; read as the run's (units.UnitSystem.cols)
COORDS = ["x_i_m", "y_i_m", "z_i_m", "x_j_m", "y_j_m", "z_j_m"]
# the design columns the index, the overview and the ranking read for every member; a drawn member's
# section reads its whole row (_Data.records)
SUMMARY_COLUMNS = ["member", "status", "utilization", "governing_case", "stirrups_total", "stirrup_mass_kg",
                   "message"]
# Utilization bands of the overview: upper limits of bands 0-3; band 4 is above 1.0 (resize).
BANDS = (0.5, 0.8, 0.95, 1.0)
BAND_LABELS = ("\u2264 0.5", "0.5\u20130.8", "0.8\u20130.95", "0.95\u20131.0", "> 1.0")
NOT_DESIGNED = -1  # band of members the tool does not design here (deep-beam, not-covered, ...)

# the member drawing, in SVG user units (px)
W, LEFT, RIGHT = 960, 66, 22
PW = W - LEFT - RIGHT
TOP, PH = 52, 200  # plot area of the shear diagram
BEAM_Y = TOP + PH + 56  # top of the beam in the elevation
CHAR_W = 7.2  # mean advance of an 11 px sans-serif character, for label layout
THIN_TOL_PX = 0.25  # largest distance of a station left out of a line from the line drawn

# control characters, DEL and the bidirectional overrides and isolates, shown as escapes
UNSEEN = {c: f"\\x{c:02x}" for c in (*range(0x20), 0x7F, *range(0x80, 0xA0))} | {
    c: f"\\u{c:04x}" for c in (*range(0x202A, 0x202F), *range(0x2066, 0x206A))}
PLAN_W = 460.0  # width of one plan (SVG user units)


def write_html_report(run: Run, out_path: Path, members: list[str] | None = None) -> Path:
    """Write the report of a designed run to ``out_path`` and return it.

    The index and the overview always cover every member; ``members`` limits the
    detail sections (diagram and elevation) to the ids listed. Without it, a run of more
    members than the settings' ``[report] detail_sections`` gets a compact report: the
    sections of that many members, the first in review order (those needing action
    first); any other member's section is written on demand with ``members``.
    """
    if not run.has_design():
        raise ValueError(f"run '{run.name}' has no design; design it with `shearpost run` first")
    data = _Data.load(run)
    detail = data.detail_codes(members)
    limit = settings_from_dict(run.manifest().get("settings", {})).report.detail_sections
    if members is None and len(detail) > limit:
        data.compact = limit
        detail = detail[:limit]
    linked = set(detail)
    pieces = _template().generate(  # streamed to the file: the index of a large run is never held whole
        **_header(data, linked), rows=_index_rows(data, linked), **_overview(data, linked),
        joints=_joint_rows(data, linked), details=Markup(_details(data, detail)),
        defs=Markup(_legend_defs() + _pattern_defs()), needs_action=NEEDS_ACTION, caution=CAUTION,
        mass_unit=data.U.mass, mass_word=data.U.mass_word, force_unit=data.U.force)
    return write_atomic(Path(out_path), lambda fh: fh.writelines(pieces))


class _Data:
    """The design's summary columns (``SUMMARY_COLUMNS``) joined with the input geometry; member k
    of ``m`` has code k. A drawn member's whole row and zones are read for it alone."""

    def __init__(self, run: Run, m: pd.DataFrame, design_manifest: dict, combinations: int,
                 joints: pd.DataFrame | None = None):
        self.run, self.m = run, m
        self.zones = pd.DataFrame()  # of the members drawn only (``load_zones``)
        self.joints = pd.DataFrame() if joints is None else joints
        self.U = run.units
        self.manifest, self.design_manifest, self.combinations = run.manifest(), design_manifest, combinations
        self.code = {name: k for k, name in enumerate(m["member"])}
        self.compact = 0  # a compact report: the detail sections of this many members, the first in review order

    @classmethod
    def load(cls, run: Run) -> _Data:
        dm = units.si_keyed(run.table("design/members.parquet", columns=run.units.cols(SUMMARY_COLUMNS)).to_pandas())
        keep = ["member", "kind", "level", "group", "length_m", "b_mm", "h_mm", "d_mm", "fc_mpa", "fyt_mpa",
                "support_i", "support_j", "face_i_mm", "face_j_mm", *COORDS, "diameter_mm", "frame", "db_long_mm",
                "n_long"]
        geo = units.si_keyed(run.table("members.parquet", columns=run.units.cols(keep)).to_pandas())
        m = dm.merge(geo, on="member", how="left")
        del dm, geo
        m["h_mm"] = m["h_mm"].fillna(m["diameter_mm"])  # a circular column: its diameter across both ways
        m["b_mm"] = m["b_mm"].fillna(m["diameter_mm"])
        m["clear_mm"] = m["length_m"] * run.units.per_span - m["face_i_mm"].fillna(0) - m["face_j_mm"].fillna(0)
        slug = m["member"].astype(str).str.replace(r"[^A-Za-z0-9_-]+", "-", regex=True).str.strip("-").str[:40]
        m["anchor"] = "m" + pd.Series(np.arange(len(m)), dtype=str) + "-" + slug
        m["place"] = status_place(m["status"])
        order = np.empty(len(m), np.int64)
        order[rank_order(m)] = np.arange(len(m))
        m["order"] = order  # place in the review order of `shearpost govern`: needing action first
        m["band"] = utilization_band(m["utilization"].to_numpy(float), m["status"].to_numpy(object))
        manifest = run.design_manifest()
        combos = run.table("design/combinations.parquet").num_rows
        joints = units.si_keyed(run.table("design/joints.parquet").to_pandas()) \
            if "design/joints.parquet" in run.files() else None
        memory.release()
        return cls(run, m, manifest, combos, joints)

    def _of(self, codes: list[int]) -> list | None:
        """A Parquet filter on the given members' rows (None where they are all the members)."""
        return [("member", "in", [str(self.m["member"].iat[k]) for k in codes])] if len(codes) < len(self.m) else None

    def load_zones(self, codes: list[int]) -> None:
        """The zones of the given members (those drawn; all of them in a full report)."""
        self.zones = units.si_keyed(self.run.table("design/zones.parquet", filters=self._of(codes)).to_pandas())

    def records(self, codes: list[int]) -> dict[int, dict]:
        """The whole design row of each given member (``m`` holds the summary columns only),
        with its geometry, by code."""
        full = units.si_keyed(self.run.table("design/members.parquet", filters=self._of(codes)).to_pandas())
        rows = self.m.iloc[codes].drop(columns=[c for c in SUMMARY_COLUMNS if c != "member"])
        rows = full.merge(rows.assign(_code=rows.index), on="member", how="right")
        return {int(k): r for k, r in zip(rows.pop("_code"), rows.to_dict("records"))}

    def detail_codes(self, members: list[str] | None) -> list[int]:
        """Codes of the members that get a detail section, in the default order."""
        if members is None:
            codes = np.arange(len(self.m))
        else:
            unknown = [name for name in members if name not in self.code]
            if unknown:
                raise ValueError(f"no member(s) {', '.join(map(repr, unknown[:10]))} in run '{self.run.name}'"
                                 + did_you_mean(unknown[0], self.code))
            codes = np.unique([self.code[name] for name in members])
        codes = np.asarray(codes, np.int64)
        return codes[np.argsort(self.m["order"].to_numpy()[codes], kind="stable")].tolist()

    def stations(self, codes: list[int]) -> dict[str, np.ndarray]:
        """The station trace of the given members as arrays, grouped by code, in station order."""
        if not self.run.listed_under("design/stations"):  # one file per part; none when no member was designed
            return {**{c: np.zeros(0) for c in STATION_COLUMNS[1:]}, "code": np.zeros(0, np.int64)}
        # a compact report or a page on demand: only those members' rows are kept
        t = self.run.table("design/stations", columns=self.U.cols(STATION_COLUMNS), filters=self._of(codes))
        t = t.rename_columns(STATION_COLUMNS)
        names = pa.array([str(v) for v in self.m["member"]], pa.string())
        code = pac.index_in(t.column("member"), value_set=names).fill_null(-1).to_numpy().astype(np.int64)
        wanted = np.zeros(len(self.m) + 1, bool)  # the last entry stands for "not a member" (-1)
        wanted[codes] = True
        sel = np.flatnonzero(wanted[code])
        sel = sel[np.argsort(code[sel], kind="stable")]
        out = {c: t.column(c).to_numpy()[sel].astype(float) for c in STATION_COLUMNS[1:]}
        out["code"] = code[sel]
        return out



# ----------------------------------------------------------------------------- page


@functools.cache
def _template():
    env = jinja2.Environment(loader=jinja2.PackageLoader("postproc", "templates"), autoescape=True,
                             undefined=jinja2.StrictUndefined, keep_trailing_newline=True)
    env.filters["shown"] = lambda v: Markup(_text("" if v is None or (isinstance(v, float) and v != v) else v))
    return env.get_template("report.html.j2")


def _header(data: _Data, linked: set[int]) -> dict:
    man, m = data.manifest, data.m
    created = str(man.get("created", ""))
    when = created.replace("T", " ")[:16] + (" UTC" if created.endswith(("+00:00", "Z")) else "")
    counts = m["status"].value_counts()
    shown = [*NEEDS_ACTION, *(s for s in STATUSES if s not in NEEDS_ACTION), *sorted(set(counts.index) - set(STATUSES))]
    act = m[m["status"].isin(NEEDS_ACTION)].sort_values("order")
    return dict(
        run_name=man.get("run", data.run.name), created=when, version=man.get("tool_version", ""),
        edition=data.design_manifest.get("code_edition") or man.get("code_edition", ""),
        n_members=len(m), n_combinations=data.combinations,
        combination_source="cases taken as already factored combinations"
        if data.design_manifest.get("combinations_prefactored") else "ACI 318-19 Table 5.3.1 from basic load cases",
        stirrup_sets=int(m["stirrups_total"].fillna(0).sum()), stirrup_mass_kg=float(m["stirrup_mass_kg"].fillna(0).sum()),
        action=[dict(member=name, anchor=anchor, status=status, message=msg, linked=k in linked)
                for k, name, anchor, status, msg in zip(act.index, act["member"], act["anchor"], act["status"],
                                                        act["message"])],
        chips=[(s, int(counts[s]), s in NEEDS_ACTION) for s in shown if s in counts.index],
        warnings=[*man.get("warnings", []), *data.design_manifest.get("warnings", [])])


def _text(value) -> str:
    """Untrusted text (ids, labels, messages) for HTML: escaped, invisible controls made visible."""
    return escape(str(value).translate(UNSEEN))


def _status(status: str) -> str:
    cls = ("st-resize" if status == "resize" else "st-act" if status in NEEDS_ACTION
           else "st-designed" if status == "designed" else "st-other")
    return f'<span class="st {cls}">{_text(status)}</span>'


def _joint_rows(data: _Data, linked: set[int]) -> list[dict]:
    """The joints of special moment frames (postproc.joints), those over phi*Vn first, then by
    utilization; each framing member linked to its section where it has one."""
    j = data.joints
    if not len(j):
        return []
    j = j.assign(_act=(j["status"] != "ok")).sort_values(["_act", "utilization", "joint"], ascending=[False, False, True])
    anchors = dict(zip(data.m["member"], data.m["anchor"]))

    def link(name: str) -> Markup:
        code = data.code.get(name)
        return _link(name, anchors[name], code in linked) if code is not None else Markup(_text(name))

    return [dict(joint=r.joint, direction=r.direction, level=r.level,
                 members=Markup(", ").join(link(n) for n in str(r.members).split()),
                 vu=f"{r.vu_kN:,.1f}", phi_vn=f"{r.phi_vn_kN:,.1f}", utilization=f"{r.utilization:.3f}",
                 coefficient=f"{r.coefficient:g}", status=r.status, act=r.status != "ok",
                 message="" if not _given(r.message) else r.message) for r in j.itertuples()]


def _index_rows(data: _Data, linked: set[int]):
    """The index, a row at a time (the template consumes it once, as the page is written)."""
    m = data.m.sort_values("order")
    util = m["utilization"].map(lambda u: "" if pd.isna(u) else f"{u:.3f}")
    mass = m["stirrup_mass_kg"].map(lambda v: "" if pd.isna(v) else f"{v:.1f}")
    sets = m["stirrups_total"].fillna(0).astype(int)
    return (dict(member=name, anchor=anchor, linked=k in linked, level=lvl, group=grp, status=status,
                 place=int(place), act=status in NEEDS_ACTION, utilization=u, governing=gov, sets=n, mass=kg)
            for k, name, anchor, status, place, u, gov, lvl, grp, n, kg in zip(
                m.index, m["member"], m["anchor"], m["status"], m["place"], util, m["governing_case"], m["level"],
                m["group"], sets, mass))


# ----------------------------------------------------------------------------- colours and numbers


def nice_step(raw: np.ndarray) -> np.ndarray:
    """The smallest of 1, 2, 2.5, 5 x 10^k at or above each raw step."""
    raw = np.maximum(np.asarray(raw, float), 1e-9)
    mag = 10.0 ** np.floor(np.log10(raw))
    f = raw / mag
    return mag * np.select([f <= 1, f <= 2, f <= 2.5, f <= 5], [1.0, 2.0, 2.5, 5.0], 10.0)


def _g(v: float) -> str:
    return f"{round(v, 1):g}"


def _points(code: np.ndarray, px: np.ndarray, py: np.ndarray) -> dict[int, str]:
    """'x,y x,y ...' per member code, from points grouped by code."""
    if len(code) == 0:
        return {}
    pts = [f"{a:g},{b:g}" for a, b in zip(np.round(px, 1).tolist(), np.round(py, 1).tolist())]
    starts = np.flatnonzero(np.r_[True, code[1:] != code[:-1]])
    ends = np.r_[starts[1:], len(code)]
    return {int(code[s]): " ".join(pts[s:e]) for s, e in zip(starts.tolist(), ends.tolist())}


def thin(code: np.ndarray, px: np.ndarray, py: np.ndarray) -> np.ndarray:
    """Mask of the points worth drawing (pixel coordinates, grouped by member code).

    Repeated points go; each member's ends and every kink stay; then, as in Douglas-Peucker
    but for all members at once, the point farthest from the line drawn between two kept
    points comes back while it is more than THIN_TOL_PX away, so curves keep their shape.
    """
    if len(code) == 0:
        return np.zeros(0, bool)
    same = np.r_[False, (code[1:] == code[:-1]) & (np.abs(np.diff(px)) < 0.05) & (np.abs(np.diff(py)) < 0.05)]
    idx = np.flatnonzero(~same)
    code, x, y = code[idx], px[idx], py[idx]
    n = len(idx)
    k = np.arange(n)
    keep = np.r_[True, code[1:] != code[:-1]] | np.r_[code[1:] != code[:-1], True]
    inner = k[1:-1]
    keep[1:-1] |= _from_segment(x, y, inner, inner - 1, inner + 1) > THIN_TOL_PX / 10
    active = k  # points whose stretch between kept points may still need one back
    while len(active):
        a = np.maximum.accumulate(np.where(keep, k, 0))  # kept point before each point (or itself)
        b = np.minimum.accumulate(np.where(keep, k, n - 1)[::-1])[::-1]  # and after
        stretch = np.cumsum(keep) - 1
        dist = _from_segment(x, y, active, a[active], b[active])
        within = stretch[active]
        starts = np.flatnonzero(np.r_[True, within[1:] != within[:-1]])
        worst = np.repeat(np.maximum.reduceat(dist, starts), np.diff(np.r_[starts, len(within)]))
        back = (dist > THIN_TOL_PX) & (dist == worst)
        keep[active[back]] = True
        split = np.zeros(stretch[-1] + 1, bool)
        split[within[back]] = True
        active = active[split[within]]
    out = np.zeros(len(same), bool)
    out[idx[keep]] = True
    return out


def _from_segment(x: np.ndarray, y: np.ndarray, p: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Distance of the points p from the segments a-b (indices into x, y)."""
    dx, dy = x[b] - x[a], y[b] - y[a]
    ex, ey = x[p] - x[a], y[p] - y[a]
    length2 = dx * dx + dy * dy
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.clip(np.where(length2 > 0, (ex * dx + ey * dy) / length2, 0.0), 0.0, 1.0)
    return np.hypot(ex - t * dx, ey - t * dy)


# ----------------------------------------------------------------------------- member sections


def _details(data: _Data, codes: list[int]) -> str:
    m = data.m
    note = ('<p class="meta">Each diagram runs along the clear span from the face of support i. The envelope is '
            "the largest |Vu| of all combinations at each station, after the critical-section rule (9.4.3.2). "
            "&phi;Vn provided is the capacity of the stirrup layout for the combination with the largest |Vu| there, "
            "with that combination's axial force; the self-check holds it for every combination.</p>")
    if len(codes) < len(m):
        note += f'<p class="meta">Detail sections for {len(codes):,} of {len(m):,} members.</p>'
    if data.compact:
        note += (f'<p class="meta">A compact report: sections for the first {data.compact:,} members in review order '
                 "(those needing action first, then by utilization; <code>[report] detail_sections</code> in the "
                 "settings). The index lists every member; <code>shearpost report --run "
                 f"{_text(data.run.name)} --member ID --out ID.html</code> writes any member&rsquo;s section.</p>")
    if not codes:
        return f'<section id="members"><h2>Members</h2>{note}</section>'
    data.load_zones(codes)
    st = data.stations(codes)
    drawn = _Drawings(data, st, codes)
    columns = [k for k in codes if data.m["kind"].iat[k] == "column"]
    drawn_vb = None
    if columns:  # a column's second diagram: the shear parallel to b, with its own scale
        on = np.isin(st["code"], columns)
        drawn_vb = _Drawings(data, {key: (st[VB_SERIES.get(key, key)][on]) for key in st}, columns)
        note += ('<p class="meta">A column has two diagrams, Vu parallel to h (V) and parallel to b (Vb), along its '
                 "clear height from the bottom face; its elevation lies on its side under them, the end zones lo "
                 "shaded. Each &phi;Vn is that direction's alone; the ties satisfy both together by the "
                 "interaction of 22.5.1.10 and 22.5.1.11.</p>")
    records = data.records(codes)  # the drawn members' rows only
    trusses = _trusses(data, codes, records)
    parts = [f'<section id="members"><h2>Members</h2>{note}']
    for k in codes:
        parts.append(_member_section(records[k], k, drawn, drawn_vb, trusses.get(k, "")))
    parts.append("</section>")
    return "".join(parts)


class _Drawings:
    """Per-member SVG fragments computed for all stations at once."""

    def __init__(self, data: _Data, st: dict[str, np.ndarray], codes: list[int]):
        m = data.m
        n = len(m)
        self.U = data.U
        code = st["code"]
        self.has_st = np.zeros(n, bool)
        self.has_st[np.unique(code)] = True
        cs = m["clear_mm"].to_numpy(float)
        st_span = np.full(n, np.nan)
        np.fmax.at(st_span, code, st["x_mm"])
        self.cs = np.where(np.isfinite(cs) & (cs > 0), cs, st_span)
        self.sx = PW / np.where(self.cs > 0, self.cs, 1.0)

        top = np.zeros(n)
        column = (m["kind"].to_numpy(object) == "column")[code]  # a column's Ve is drawn (a frame beam's is noted)
        for c in ("vu_max_kN", "phi_vc_kN", "phi_vn_kN", "avmin_threshold_kN", "ve_kN"):
            np.fmax.at(top, code, np.where(column, st[c], np.nan) if c == "ve_kN" else st[c])
        lim_lo = np.full(n, np.inf)
        np.fmin.at(lim_lo, code, st["phi_vn_limit_kN"])
        self.show_lim = lim_lo <= 1.25 * top  # the section limit (22.5.1.2) is drawn when it is near the plot
        lim_hi = np.zeros(n)
        np.fmax.at(lim_hi, code, st["phi_vn_limit_kN"])
        top = np.where(self.show_lim, np.fmax(top, lim_hi), top)
        top = np.where(top > 0, top, 1.0)
        self.ystep = nice_step(top * 1.04 / 5)
        self.ymax = np.ceil(top * 1.04 / self.ystep) * self.ystep
        self.xstep = nice_step(self.cs / 9)

        x = st["x_mm"]
        px = LEFT + x * self.sx[code]
        self._yscale = PH / self.ymax

        def line(column: str, sel: np.ndarray | None = None) -> dict[int, str]:
            return _points(*self._thin(code, px, TOP + PH - st[column] * self._yscale[code], sel))

        self.env = line("vu_max_kN")
        self.vc = line("phi_vc_kN")
        self.avm = line("avmin_threshold_kN")
        self.lim = line("phi_vn_limit_kN", self.show_lim[code])
        self.ve = line("ve_kN", column)  # columns of moment frames: the capacity-design shear
        self.cap = _points(*self._thin(*self._steps(data, code, x, st["phi_vn_kN"], st["spacing_mm"])))
        self.stirrups, self.zone_labels = _stirrups(data, codes)

    @staticmethod
    def _thin(code, px, py, sel=None):
        ok = np.isfinite(py) if sel is None else (np.isfinite(py) & sel)
        code, px, py = code[ok], px[ok], py[ok]
        k = thin(code, px, py)
        return code[k], px[k], py[k]

    def _steps(self, data: _Data, code, x, phi_vn, spacing):
        """Provided capacity as a step line: a vertical step at the zone boundary where the
        spacing changes between two stations (or halfway, if no boundary lies between them)."""
        ok = np.isfinite(phi_vn)
        code, x, v, s = code[ok], x[ok], phi_vn[ok], spacing[ok]
        change = np.flatnonzero((code[1:] == code[:-1]) & (s[1:] != s[:-1]))
        z = data.zones
        span = 1e6  # mm: a key wider than any clear span keeps members apart
        bkeys = np.r_[np.sort(z["member"].map(data.code).to_numpy(float) * span + z["end_mm"].to_numpy(float)), np.inf]
        lo, hi = code[change] * span + x[change], code[change] * span + x[change + 1]
        j = np.searchsorted(bkeys, lo)
        xb = np.where(bkeys[j] <= hi, bkeys[j] - code[change] * span, (x[change] + x[change + 1]) / 2)
        order_key = np.r_[np.arange(len(x)) * 3.0, change * 3.0 + 1, change * 3.0 + 2]
        order = np.argsort(order_key, kind="stable")
        ac = np.r_[code, code[change], code[change]][order]
        ax = np.r_[x, xb, xb][order]
        av = np.r_[v, v[change], v[change + 1]][order]
        return ac, LEFT + ax * self.sx[ac], TOP + PH - av * self._yscale[ac]


def _stirrups(data: _Data, codes: list[int]) -> tuple[dict[int, np.ndarray], dict[int, list]]:
    """Stirrup positions (mm from face i), as the detailing placed them, and zone labels per member."""
    wanted = set(codes)
    pos = units.si_keyed(data.run.table("design/stirrups.parquet", filters=data._of(codes)).to_pandas())
    pos = pos.assign(code=pos["member"].map(data.code))
    pos = pos[pos["code"].isin(wanted)]
    code, x = pos["code"].to_numpy(np.int64), pos["x_mm"].to_numpy(float)
    order = np.lexsort((x, code))  # by member, then along it
    code, x = code[order], x[order]
    starts = np.flatnonzero(np.r_[True, code[1:] != code[:-1]]) if len(code) else np.zeros(0, np.int64)
    out = {int(code[a]): x[a:b] for a, b in zip(starts.tolist(), np.r_[starts[1:], len(code)].tolist())}
    z = data.zones.assign(code=data.zones["member"].map(data.code))
    z = z[z["code"].isin(wanted)].sort_values(["code", "zone"], kind="stable")
    labels: dict[int, list] = {}
    kinds = z["kind"].fillna("stirrup").tolist() if "kind" in z else ["stirrup"] * len(z)
    for code, z0, z1, cnt, bar, legs, sp, kind in zip(z["code"].tolist(), z["start_mm"].tolist(), z["end_mm"].tolist(),
                                                      z["count"].tolist(), z["bar"].tolist(), z["legs"].tolist(),
                                                      z["spacing_mm"].tolist(), kinds):
        hoops = "hoops " if kind == "hoop" else ""
        text = f"{cnt} {hoops}{bar} x{legs} @ {sp:g}" if cnt and math.isfinite(sp) else \
            (f"1 {hoops}{bar} x{legs}" if cnt else "no stirrups")
        labels.setdefault(int(code), []).append((z0, z1, text, kind == "hoop"))
    return out, labels


def _given(v) -> bool:
    """Not missing: neither None, NA, NaN nor an empty string."""
    return v is not None and v is not pd.NA and v == v and v != ""


def _fmt(v, spec: str = ".1f", unit: str = "") -> str:
    return f"{v:{spec}}{unit}" if _given(v) else "n/a"


def _member_section(r: dict, k: int, d: _Drawings, d_vb: _Drawings | None = None, truss: str = "") -> str:
    U = d.U
    mm, kN = U.length, f" {U.force}"
    name = _text(r["member"])
    where = " &middot; ".join(f"{c} {_text(r[c])}" for c in ("level", "group") if _given(r[c]))
    geo = ""
    if r.get("kind") == "column" and _given(r["b_mm"]):
        size = (f"D = {r['diameter_mm']:g} {mm} (bw = D, d = 0.8 D, 22.5.2.2)" if _given(r.get("diameter_mm")) else
                f"b &times; h = {r['b_mm']:g} &times; {r['h_mm']:g} {mm}")
        bars = f"{int(r['n_long'])} bars of {r['db_long_mm']:g} {mm}" if _given(r.get("n_long")) else "bars not given"
        geo = (f"column {size}, {bars} &middot; f&prime;c {r['fc_mpa']:g} {U.stress}, fyt {r['fyt_mpa']:g} "
               f"{U.stress} &middot; clear height {d.cs[k]:,.0f} {mm} &middot; frame {_text(r.get('frame') or 'none')}")
    elif _given(r["b_mm"]):
        geo = (f"b &times; h = {r['b_mm']:g} &times; {r['h_mm']:g} {mm}, d = {r['d_mm']:g} {mm} &middot; "
               f"f&prime;c {r['fc_mpa']:g} {U.stress}, fyt {r['fyt_mpa']:g} {U.stress} &middot; "
               f"clear span {d.cs[k]:,.0f} {mm} &middot; "
               f"supports {_text(r['support_i'])} / {_text(r['support_j'])}")
    facts = [p for p in (where, geo) if p]
    if _given(r["utilization"]):
        crit = lambda c: f" ({_text(r[c])})" if _given(r[c]) else ""
        at = ""
        if _given(r.get("x_governing_mm")):  # the station and combination behind the utilization
            at = (f" at x = {r['x_governing_mm']:,.0f} {mm}: Vu {_fmt(r['vu_kN'], '.1f', kN)}, "
                  f"Nu {_fmt(r['nu_kN'], '.1f', kN)}" + (f", Tu {_fmt(r['tu_kNm'], '.1f', ' ' + U.moment)}"
                                                       if _given(r.get("tu_kNm")) and r["tu_kNm"] else ""))
        facts.append(f"utilization {r['utilization']:.3f}, {_text(r['governing_case'])}{at} &middot; "
                     f"&phi;Vc {_fmt(r['phi_vc_kN'], '.1f', kN)}"
                     + (f" ({_text(r['vc_equation'])})" if _given(r.get("vc_equation")) else "") + " &middot; "
                     f"&phi;Vn,max {_fmt(r['phi_vn_limit_kN'], '.1f', kN)} (22.5.1.2)")
        facts.append(f"design Vu: i {_fmt(r['vu_design_i_kN'], '.1f', kN)}{crit('crit_i')}, "
                     f"j {_fmt(r['vu_design_j_kN'], '.1f', kN)}{crit('crit_j')} (9.4.3.2)")
    if r["status"] == "designed":
        facts.append(f"{int(r['stirrups_total']):,} stirrup sets, {_fmt(r['stirrup_mass_kg'], '.1f', ' ' + U.mass)}")
    if _given(r.get("method")) and str(r["method"]).startswith("strut-and-tie"):
        facts.append(f"designed by {_text(r['method'])} &middot; bottom tie {_text(r['tie_bars'])}, "
                     f"As,req {_fmt(r['tie_as_req_mm2'], ',.0f' if U.name == 'si' else ',.2f', ' ' + U.area)} &middot; "
                     f"web bars {_text(r['web_bars'])}")
    if r.get("kind") == "column" and _given(r.get("utilization_v")):
        facts.append(f"V alone {r['utilization_v']:.3f}, Vb alone {r['utilization_vb']:.3f} &middot; "
                     f"design Vb: i {_fmt(r['vb_design_i_kN'], '.1f', kN)}, j {_fmt(r['vb_design_j_kN'], '.1f', kN)}"
                     + (f" &middot; Ve {_fmt(r['ve_v_kN'], '.0f', kN)} / {_fmt(r['ve_vb_kN'], '.0f', kN)}"
                        if _given(r.get("ve_v_kN")) else "")
                     + (f" &middot; lo {r['lo_mm']:,.0f} {mm}" if _given(r.get("lo_mm")) else ""))
    msg = f'<p class="msg">{_text(r["message"])}</p>' if _given(r["message"]) else ""
    svg = _member_svg(r, k, d) if d.has_st[k] else ""
    if r.get("kind") == "column" and d_vb is not None and d_vb.has_st[k]:
        svg = _member_svg(r, k, d, "Vu parallel to h (V)", False) + _member_svg(r, k, d_vb, "Vu parallel to b (Vb)")
    lines = "".join(f'<p class="facts">{p}</p>' for p in facts)
    return (f'<section class="member" id="{r["anchor"]}"><h3>{name} {_status(r["status"])} '
            f'<a class="meta" href="#index" title="back to the index">&uarr; index</a></h3>{lines}{msg}{svg}{truss}'
            "</section>")


LEGEND = (("env", "Vu envelope (all combinations)"), ("cap", "\u03c6Vn provided"), ("vc", "\u03c6Vc"),
          ("avm", "Av,min threshold (9.6.3.1, 10.6.2.1)"), ("lim", "\u03c6Vn,max (22.5.1.2)"),
          ("ve", "Ve, capacity design (18.7.6.1, 18.4.3.1)"), ("crit", "critical section (9.4.3.2)"))


def _legend_id(cap: bool, lim: bool, ve: bool = False) -> str:
    return f"lg{int(cap)}{int(lim)}" + ("e" if ve else "")


def _legend_defs() -> str:
    """One legend per combination of optional series, defined once and placed with <use>."""
    out = []
    for cap, lim, ve in itertools.product((False, True), repeat=3):
        shown = {"env", "vc", "avm", "crit"} | {k for k, on in (("cap", cap), ("lim", lim), ("ve", ve)) if on}
        x, y, items = 0.0, 0.0, []
        for key, text in LEGEND:
            if key not in shown:
                continue
            width = 23 + CHAR_W * len(text)
            if x > 0 and x + width > PW:
                x, y = 0.0, y + 16
            sample = (f'<rect class="env" x="{x:g}" y="{y - 7:g}" width="18" height="9"/>' if key == "env" else
                      f'<path class="{key}" d="M{x:g},{y - 2.5:g}h18"/>')
            items.append(f'{sample}<text x="{x + 23:g}" y="{y + 1:g}">{_text(text)}</text>')
            x += width + 22
        out.append(f'<g id="{_legend_id(cap, lim, ve)}">{"".join(items)}</g>')
    return "".join(out)


def _tspans(xs, ys, labels) -> str:
    return "".join(f'<tspan x="{_g(x)}" y="{_g(y)}">{t}</tspan>' for x, y, t in zip(xs, ys, labels))


def _member_svg(r: dict, k: int, d: _Drawings, title: str | None = None, with_elevation: bool = True) -> str:
    cs, sx = float(d.cs[k]), float(d.sx[k])
    x_end = LEFT + cs * sx
    base = TOP + PH
    ymax, ystep, xstep = float(d.ymax[k]), float(d.ystep[k]), float(d.xstep[k])
    yv = [ystep * i for i in range(int(round(ymax / ystep)) + 1)]
    ypx = [base - v * PH / ymax for v in yv]
    xv = [xstep * i for i in range(int(cs / xstep + 1e-9) + 1)]
    if x_end - (LEFT + xv[-1] * sx) > 48:  # label the clear span at the far face
        xv.append(cs)
    xpx = [LEFT + v * sx for v in xv]
    p = [f'<use href="#{_legend_id(k in d.cap, bool(d.show_lim[k]), k in d.ve)}" x="{LEFT}" y="16"/>',
         f'<path class="g" d="{"".join(f"M{LEFT},{_g(y)}h{PW}" for y in ypx[1:])}'
         f'{"".join(f"M{_g(x)},{TOP}V{base}" for x in xpx[1:])}"/>',
         f'<text text-anchor="end">{_tspans([LEFT - 6] * len(yv), [y + 4 for y in ypx], map("{:g}".format, yv))}'
         f"</text>",
         f'<text text-anchor="middle">{_tspans(xpx, [base + 15] * len(xv), map("{:,.0f}".format, xv))}</text>',
         f'<text class="ttl" text-anchor="middle" transform="rotate(-90)" x="{-(TOP + PH / 2):g}" y="16">'
         f"shear ({d.U.force})</text>",
         f'<text class="ttl" text-anchor="middle" x="{LEFT + PW / 2:g}" y="{base + 32}">'
         + (f"height above the bottom face ({d.U.length})" if r.get("kind") == "column" else
            f"distance from the face of support i ({d.U.length})") + "</text>"]
    if title:
        p.append(f'<text class="ttl" x="{LEFT + PW:g}" y="{TOP - 8}" text-anchor="end">{_text(title)}</text>')
    if k in d.env:
        p.append(f'<path class="env" d="M{LEFT},{base}L{d.env[k]}L{_g(x_end)},{base}Z"/>')
    for key in ("lim", "avm", "vc", "ve", "cap"):
        pts = getattr(d, key).get(k)
        if pts:
            p.append(f'<polyline class="{key}" points="{pts}"/>')
    offset = {"d": float(r["d_mm"]), "face": 0.0}  # critical section from its face (9.4.3.2)
    for rule, at_j in ((r["crit_i"], False), (r["crit_j"], True)):
        if rule in offset:
            x = LEFT + (cs - offset[rule] if at_j else offset[rule]) * sx
            p.append(f'<path class="crit" d="M{_g(x)},{TOP - 4}V{base}"/>')
    p.append(f'<path class="ax" d="M{LEFT},{TOP - 4}V{base}H{LEFT + PW}"/>')
    height = base + 42
    if with_elevation and (k in d.stirrups or k in d.zone_labels):
        elev, height = _elevation(r, cs, sx, d.stirrups.get(k, np.array([])), d.zone_labels.get(k, []), d.U.length)
        p.append(elev)
    label = _text(f"shear diagram{' (' + title + ')' if title else ''} and elevation of member {r['member']}")
    return (f'<svg class="mem" viewBox="0 0 {W} {height:g}" width="{W}" height="{height:g}" role="img" '
            f'aria-label="{label}">{"".join(p)}</svg>')


def _elevation(r: dict, cs: float, sx: float, pos: np.ndarray, labels: list, mm: str = "mm") -> tuple[str, float]:
    """The beam outline over the clear span, a line per stirrup, the zones dimensioned below."""
    y0 = BEAM_Y
    hpx = float(np.clip(r["h_mm"] * sx, 30.0, 80.0))
    wpx = cs * sx
    column = r.get("kind") == "column"
    scale = "(to scale)" if hpx == r["h_mm"] * sx else "(depth not to scale)"
    what = (f"column elevation on its side, bottom face at the left, {r['h_mm']:g} {mm} deep {scale}" if column else
            f"stirrup elevation, h = {r['h_mm']:g} {mm} {scale}")
    p = [f'<text class="ttl" x="{LEFT}" y="{y0 - 9}">{_text(what)}</text>']
    lo = r.get("lo_mm")
    shade = ""
    if column and _given(lo):  # the end zones lo (18.7.5.1, 18.4.3.3), shaded
        w_lo = min(float(lo), cs / 2) * sx
        shade = (f'<rect class="lo" x="{LEFT}" y="{y0}" width="{_g(w_lo)}" height="{_g(hpx)}"/>'
                 f'<rect class="lo" x="{_g(LEFT + wpx - w_lo)}" y="{y0}" width="{_g(w_lo)}" height="{_g(hpx)}"/>')
    for side, x in (("support_i", LEFT - 12), ("support_j", LEFT + wpx)):
        if r[side] != "free":
            p.append(f'<rect class="sup" x="{_g(x)}" y="{y0 - 8}" width="12" height="{_g(hpx + 16)}"/>')
    p.append(f'<rect class="beam" x="{LEFT}" y="{y0}" width="{_g(wpx)}" height="{_g(hpx)}"/>{shade}')
    if len(pos):
        top, length = _g(y0 + 3), _g(hpx - 6)
        xs = np.round(LEFT + pos * sx, 1).tolist()
        p.append(f'<path class="stir" d="{"".join(f"M{x:g} {top}v{length}" for x in xs)}"/>')
    dim_y = y0 + hpx + 10
    for z0, z1, _, hoop in labels:  # hinge zones (Chapter 18): hoops, hatched over the beam (a column shades lo)
        if hoop and not column:
            p.append(f'<rect class="hinge" x="{_g(LEFT + z0 * sx)}" y="{y0}" width="{_g(max((z1 - z0) * sx, 2.0))}" '
                     f'height="{_g(hpx)}"><title>hoops (ACI 318-19 18.6.4, 18.4.2.4)</title></rect>')
    edges = sorted({round(LEFT + e * sx, 1) for z0, z1, _, _ in labels for e in (z0, z1)})
    p.append(f'<path class="dim" d="M{LEFT},{_g(dim_y)}H{_g(LEFT + wpx)}'
             f'{"".join(f"M{x:g},{_g(dim_y - 4)}v8" for x in edges)}"/>')
    rows_end: list[float] = []
    texts = []
    for z0, z1, text, _ in labels:
        w = CHAR_W * len(text)
        cx = min(max(LEFT + (z0 + z1) / 2 * sx, LEFT + w / 2), LEFT + wpx - w / 2)
        row = next((i for i, e in enumerate(rows_end) if cx - w / 2 > e + 8), len(rows_end))
        if row == len(rows_end):
            rows_end.append(-np.inf)
        rows_end[row] = cx + w / 2
        texts.append(f'<tspan x="{_g(cx)}" y="{_g(dim_y + 15 + 14 * row)}">{_text(text)}</tspan>')
    p.append(f'<text text-anchor="middle">{"".join(texts)}</text>')
    return "".join(p), round(dim_y + 15 + 14 * max(len(rows_end) - 1, 0) + 10)


# ----------------------------------------------------------------------------- strut-and-tie models

TRUSS_TOP = 46  # room for the title, the legend and the top labels above the member
TRUSS_H_MIN, TRUSS_H_MAX = 90.0, 240.0  # drawn depth of the member, px


def _trusses(data: _Data, codes: list[int], records: dict[int, dict]) -> dict[int, str]:
    """The truss of every member designed by strut-and-tie, over its elevation (SVG per code).

    The three stored tables are turned into numpy columns once and cut per member by
    sorted position: a pandas sub-frame per member (groupby, then a dozen column reads
    and masks on each) cost far more than drawing the truss itself."""
    wanted = set(data.m["member"].iloc[codes])
    struts, ties, nodes = (deep_step.stored(data.run, name) for name in ("struts", "ties", "nodes"))
    if "member" not in struts or not len(struts):
        return {}
    s_by = _by_member(struts, wanted, ("x1_mm", "y1_mm", "x2_mm", "y2_mm", "utilization", "element"))
    t_by = _by_member(ties, wanted, ("x1_mm", "y1_mm", "x2_mm", "y2_mm", "utilization", "element"))
    n_by = _by_member(nodes, wanted, ("x_mm", "y_mm", "utilization", "node"))
    none_t = {c: np.zeros(0) for c in ("x1_mm", "y1_mm", "x2_mm", "y2_mm", "utilization", "element")}
    none_n = {c: np.zeros(0) for c in ("x_mm", "y_mm", "utilization", "node")}
    out = {}
    for name, s in s_by.items():
        k = data.code[name]
        out[k] = _truss_svg(records[k], s, t_by.get(name, none_t), n_by.get(name, none_n))
    return out


def _by_member(df: pd.DataFrame, wanted: set, columns: tuple[str, ...]) -> dict[str, dict[str, np.ndarray]]:
    """A table's columns as numpy arrays, cut per wanted member (rows in stored order)."""
    if "member" not in df or not len(df):
        return {}
    member = df["member"].to_numpy(object)
    sel = np.flatnonzero(np.fromiter((m in wanted for m in member), bool, len(member)))
    if not len(sel):
        return {}
    sel = sel[np.argsort(member[sel], kind="stable")]
    cols = {c: df[c].to_numpy(float if c.endswith(("_mm", "utilization")) else object)[sel] for c in columns}
    names = member[sel]
    starts = np.flatnonzero(np.r_[True, names[1:] != names[:-1]])
    ends = np.r_[starts[1:], len(names)]
    return {names[a]: {c: v[a:b] for c, v in cols.items()} for a, b in zip(starts.tolist(), ends.tolist())}


def _band_of(u) -> np.ndarray:
    """Band of an element's utilization (as utilization_band; > 1.0 beyond rounding)."""
    u = np.asarray(u, float)
    return np.where(u > BANDS[-1] + 1e-9, 4, np.searchsorted(np.asarray(BANDS), np.minimum(u, BANDS[-1])))


def _truss_svg(r: dict, struts: dict[str, np.ndarray], ties: dict[str, np.ndarray], nodes: dict[str, np.ndarray]) -> str:
    """The member's elevation over the models' extent (bearings and the start of any sectional
    part) with the truss drawn over it: struts as solid lines, ties as open lines, nodes as
    squares, each in the line weight of its utilization band (as in the overview) with its
    utilization written beside it."""
    cs, h = float(r["clear_mm"]), float(r["h_mm"])
    xs = np.r_[struts["x1_mm"], struts["x2_mm"], ties["x1_mm"], ties["x2_mm"], nodes["x_mm"]]
    ends = {n: float(x) for n, x in zip(nodes["node"], nodes["x_mm"]) if n in ("R_i", "R_j")}  # bearing centroids
    lo = min(float(np.nanmin(xs)), 2 * ends["R_i"] if "R_i" in ends else np.inf)
    hi = max(float(np.nanmax(xs)), 2 * ends["R_j"] - cs if "R_j" in ends else -np.inf)
    pad = 0.06 * (hi - lo)
    lo, hi = lo - (pad if "R_i" not in ends else 0.0), hi + (pad if "R_j" not in ends else 0.0)
    sx = PW / max(hi - lo, 1.0)
    hpx = float(np.clip(h * sx, TRUSS_H_MIN, TRUSS_H_MAX))
    sy = hpx / h
    X = lambda v: LEFT + (np.asarray(v, float) - lo) * sx  # noqa: E731
    Y = lambda v: TRUSS_TOP + 16 + hpx - np.asarray(v, float) * sy  # noqa: E731
    top, bot = float(Y(h)), float(Y(0.0))
    scale = "to scale" if abs(hpx - h * sx) < 1e-9 else "depth not to scale"
    p = [f'<text class="ttl" x="{LEFT}" y="16">strut-and-tie model, utilization of each element ({scale}; x from the '
         "face of support i)</text>",
         f'<text x="{LEFT}" y="31">struts solid, ties open, nodes square; line weight and dashes by utilization band, '
         "as in the overview</text>",
         f'<rect class="beam" x="{LEFT}" y="{_g(top)}" width="{_g(PW)}" height="{_g(bot - top)}"/>']
    for node, x0, x1 in (("R_i", lo, 0.0), ("R_j", cs, hi)):
        if node in ends:
            p.append(f'<rect class="sup" x="{_g(float(X(x0)))}" y="{_g(bot)}" width="{_g((x1 - x0) * sx)}" '
                     'height="10"/>')
    for edge, x in (("i", lo), ("j", hi)):  # the member goes on: the sectional part
        if f"R_{edge}" not in ends:
            xe = float(X(x))
            p.append(f'<path class="dim" d="M{xe:.1f},{top - 4:.1f}V{bot + 4:.1f}"/>')
            anchor = "start" if edge == "i" else "end"
            p.append(f'<text x="{xe + (4 if edge == "i" else -4):.1f}" y="{bot + 16:.1f}" text-anchor="{anchor}">'
                     "sectional part</text>")
    labels = []
    for df, is_tie in ((struts, False), (ties, True)):
        if not len(df["utilization"]):
            continue
        band = _band_of(df["utilization"])
        x1, y1, x2, y2 = (X(df["x1_mm"]), Y(df["y1_mm"]), X(df["x2_mm"]), Y(df["y2_mm"]))
        for a, b, c, d, bd, u, el in zip(x1, y1, x2, y2, band, df["utilization"], df["element"]):
            tip = _text(f"{el}: utilization {u:.3f}")
            line = f"M{a:.1f},{b:.1f}L{c:.1f},{d:.1f}"
            p.append(f'<path class="u{bd}{" tie" if is_tie else ""}" d="{line}"><title>{tip}</title></path>')
            if is_tie:
                p.append(f'<path class="tiec" d="{line}"/>')
            mx, my = (a + c) / 2, (b + d) / 2
            if abs(d - b) < 1:  # a chord: above the top one, below the bottom one
                labels.append((mx, my - 7 if my < (top + bot) / 2 else my + 13, f"{u:.2f}", "middle"))
            else:
                labels.append((mx + 5, my, f"{u:.2f}", "start"))
    if len(nodes["utilization"]):
        band = _band_of(nodes["utilization"])
        for x, y, bd, u, nm in zip(X(nodes["x_mm"]), Y(nodes["y_mm"]), band, nodes["utilization"], nodes["node"]):
            p.append(f'<rect class="node f{bd}" x="{x - 4:.1f}" y="{y - 4:.1f}" width="8" height="8">'
                     f'<title>{_text(f"node {nm}: utilization {u:.3f}")}</title></rect>')
            labels.append((x, y - 20 if y < (top + bot) / 2 else y + 27, f"{nm} {u:.2f}", "middle"))
    for x, y, t, anchor in labels:
        p.append(f'<text class="utl" x="{x:.1f}" y="{y + 3:.1f}" text-anchor="{anchor}">{_text(t)}</text>')
    height = bot + 34
    label = _text(f"strut-and-tie model of member {r['member']}")
    return (f'<svg class="mem truss" viewBox="0 0 {W} {height:.0f}" width="{W}" height="{height:.0f}" role="img" '
            f'aria-label="{label}">{"".join(p)}</svg>')


# ----------------------------------------------------------------------------- overview


def utilization_band(util: np.ndarray, status: np.ndarray) -> np.ndarray:
    """Band of each member: 0 (<= 0.5), 1 (0.5-0.8), 2 (0.8-0.95), 3 (0.95-1.0), 4 (> 1.0);
    NOT_DESIGNED for members the tool does not design here (deep-beam, not-covered, ...)."""
    band = np.searchsorted(np.asarray(BANDS), np.nan_to_num(util, nan=0.0), side="left")
    designed = np.isin(status, ("designed", "resize"))
    return np.where(designed, np.where(status == "resize", 4, band), NOT_DESIGNED)


def _pattern_defs() -> str:
    """Fills that read without colour: hatching for > 1.0, dots for members not designed, a
    light cross-hatch for the hinge zones (hoops) of frame beams."""
    return ('<pattern id="hatch" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">'
            '<rect width="6" height="6" fill="#f4d9d6"/><path d="M0 0V6" stroke="#b3261e" stroke-width="2.4"/>'
            '</pattern><pattern id="dots" width="5" height="5" patternUnits="userSpaceOnUse">'
            '<rect width="5" height="5" fill="#f1f2f3"/><circle cx="2.5" cy="2.5" r="0.9" fill="#8d939b"/></pattern>'
            '<pattern id="hatch-hinge" width="8" height="8" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">'
            '<path d="M0 0V8M0 0H8" stroke="#9aa0a8" stroke-width="0.8"/></pattern>')


def _legend(with_plans: bool) -> str:
    sample = lambda cls: (f'<svg width="34" height="12" aria-hidden="true"><path class="{cls}" d="M3 6H31"/></svg>')
    items = [f'<span role="listitem">{sample(f"u{k}")}{_text(text)}</span>' for k, text in enumerate(BAND_LABELS)]
    items[-1] = items[-1].replace("</span>", " (resize: dashed, named)</span>")
    items.append(f'<span role="listitem">{sample("nd")}not designed here</span>')
    if with_plans:
        items.append('<span role="listitem"><svg width="14" height="12" aria-hidden="true"><rect class="col" x="2" '
                     'y="1" width="10" height="10"/></svg>column carrying the level (plans)</span>')
    return "".join(items)


def _levels(m: pd.DataFrame) -> pd.Series:
    return m["level"].where(m["level"].notna() & (m["level"].astype(str) != ""), "(no level)").astype(str)


def _link(name, anchor: str, linked: bool) -> Markup:
    return Markup(f'<a href="#{anchor}">{_text(name)}</a>' if linked else _text(name))


def _names(rows: pd.DataFrame, linked: set[int], most: int) -> list[Markup]:
    out = [_link(n, a, k in linked) for k, n, a in zip(rows.index[:most], rows["member"], rows["anchor"])]
    if len(rows) > most:
        out.append(Markup(f"and {len(rows) - most:,} more"))
    return out


def _strip(bands: np.ndarray) -> str:
    """One level's members as a bar of band segments, widths by count, counts written inside."""
    width, height = 600.0, 20.0
    counts = [(k, int((bands == k).sum())) for k in (*range(len(BAND_LABELS)), NOT_DESIGNED)]
    total = max(len(bands), 1)
    x, parts = 0.0, []
    for k, n in counts:
        if not n:
            continue
        w = width * n / total
        cls = "fnd" if k == NOT_DESIGNED else f"f{k}"
        what = "not designed here" if k == NOT_DESIGNED else f"utilization {BAND_LABELS[k]}"
        parts.append(f'<rect class="bar {cls}" x="{x:.1f}" y="0" width="{w:.1f}" height="{height:g}">'
                     f"<title>{n:,} member(s): {_text(what)}</title></rect>")
        if w >= 8 * len(f"{n:,}") + 6:
            light = " lt" if k in (2, 3) else ""
            parts.append(f'<text class="cnt{light}" x="{x + w / 2:.1f}" y="14" text-anchor="middle">{n:,}</text>')
        x += w
    return (f'<svg viewBox="0 0 {width:g} {height:g}" width="{width:g}" height="{height:g}" preserveAspectRatio="none" '
            f'role="img" aria-label="members by utilization band">{"".join(parts)}</svg>')


def _overview(data: _Data, linked: set[int]) -> dict:
    """The strips (always) and the plans (where the members carry coordinates)."""
    m = data.m
    level = _levels(m)
    strips = []
    for lv in dict.fromkeys(level):
        rows = m[level == lv].sort_values("order")
        band = rows["band"].to_numpy()
        names = []
        over = rows[band == 4]
        if len(over):
            names.append(("> 1.0", _names(over, linked, 40)))
        other = rows[rows["status"].isin(NEEDS_ACTION) & (band != 4)]
        if len(other):
            names.append(("needs action", [Markup(f"{x} ({_text(s)})") for x, s in
                                            zip(_names(other, linked, 40), other["status"])]))
        near = rows[band == 3]
        if len(near):
            names.append(("0.95\u20131.0", _names(near, linked, 12)))
        strips.append(dict(level=f"{lv} ({len(rows):,})", svg=Markup(_strip(band)), names=names))
    xyz = m[COORDS].to_numpy(float)
    placed = np.isfinite(xyz).all(axis=1)
    plans = _plans(data, placed, level, linked) if placed.any() else []
    missing = int((~placed).sum())
    note = f"; {missing:,} member(s) without coordinates are not drawn" if plans and missing else ""
    no_plans = (f"No plans: this run's members table gives no member coordinates ({data.U.col('x_i_m')} ... "
                f"{data.U.col('z_j_m')}, read from an IFC model), so the members are shown by band above, with those "
                "over 0.95 named, and all of them in the index.")
    return dict(legend=Markup(_legend(bool(plans))), strips=strips, plans=plans, plans_note=note, no_plans=no_plans)


def _plans(data: _Data, placed: np.ndarray, level: pd.Series, linked: set[int]) -> list[dict]:
    """A plan per level from the members' end coordinates, all at one scale: beams as lines
    in their band's style, the columns that carry the level as squares, failures named."""
    m = data.m[placed]
    level = level[placed]
    x1, y1, z1, x2, y2, z2 = (m[c].to_numpy(float) for c in COORDS)
    length = np.sqrt((x2 - x1) ** 2 + (y2 - y1) ** 2 + (z2 - z1) ** 2)
    vertical = np.abs(z2 - z1) > 0.9 * np.maximum(length, 1e-9)
    lo, hi = np.minimum(x1, x2).min(), np.maximum(x1, x2).max()
    ylo, yhi = np.minimum(y1, y2).min(), np.maximum(y1, y2).max()
    pad, label_room = 14.0, 16.0
    s = (PLAN_W - 2 * pad) / max(hi - lo, yhi - ylo, 1e-9)
    height = (yhi - ylo) * s + 2 * pad + label_room
    X = lambda v: pad + (v - lo) * s
    Y = lambda v: pad + (yhi - v) * s
    bar_m = float(nice_step(np.array([(hi - lo) / 5]))[0]) if hi > lo else 1.0
    scale_bar = (f'<path class="scale" d="M{pad:g},{height - 8:.1f}h{bar_m * s:.1f}M{pad:g},{height - 12:.1f}v8'
                 f'M{pad + bar_m * s:.1f},{height - 12:.1f}v8"/><text x="{pad + bar_m * s + 6:.1f}" '
                 f'y="{height - 5:.1f}">{bar_m:g} {data.U.span}</text>')
    top = np.maximum(z1, z2)
    centre = (PLAN_W / 2, pad + (yhi - ylo) * s / 2)
    plans = []
    beams = ~vertical
    bands, names, status = m["band"].astype(int).tolist(), m["member"].tolist(), m["status"].tolist()
    util, anchors, codes = m["utilization"].tolist(), m["anchor"].tolist(), m.index.tolist()
    for lv in dict.fromkeys(level[beams]):
        on = beams & (level == lv).to_numpy()
        z = float(np.median(np.r_[z1[on], z2[on]]))
        cols = vertical & (np.abs(top - z) < 0.1)
        idx = np.flatnonzero(on)
        idx = idx[np.lexsort((m["band"].to_numpy()[idx],))]  # failures drawn last, on top
        lines, tags = [], []
        for k in idx.tolist():  # the columns as lists: a row read through pandas per member is slow
            band = bands[k]
            cls = "nd" if band == NOT_DESIGNED else f"u{band}"
            tip = _text(f"{names[k]}: {status[k]}" + ("" if pd.isna(util[k]) else f", utilization {util[k]:.3f}"))
            a, b, c, d = X(x1[k]), Y(y1[k]), X(x2[k]), Y(y2[k])
            line = f'<path class="{cls}" d="M{a:.1f},{b:.1f}L{c:.1f},{d:.1f}"><title>{tip}</title></path>'
            lines.append(f'<a href="#{anchors[k]}">{line}</a>' if codes[k] in linked else line)
            if band == 4 or status[k] in NEEDS_ACTION:
                tags.append(_tag(names[k], a, b, c, d, band == 4, centre))
        squares = "".join(f'<rect class="col" x="{X(x) - 3.5:.1f}" y="{Y(y) - 3.5:.1f}" width="7" height="7"/>'
                          for x, y in zip(x1[cols], y1[cols]))
        n_fail = int((m["band"].to_numpy()[on] == 4).sum())
        n_act = int(m["status"].iloc[np.flatnonzero(on)].isin(NEEDS_ACTION).sum())
        meta = f"z = {z:.2f} {data.U.span} &middot; {on.sum():,} beams" + \
            (f" &middot; {n_act:,} need action" if n_act else "") + (f", {n_fail:,} over 1.0" if n_fail else "")
        svg = (f'<svg viewBox="0 0 {PLAN_W:g} {height:.0f}" width="{PLAN_W:g}" height="{height:.0f}" role="img" '
               f'aria-label="{_text(f"plan of level {lv}")}">{squares}{"".join(lines)}{"".join(tags)}{scale_bar}</svg>')
        plans.append(dict(level=lv, meta=Markup(meta), svg=Markup(svg), z=z))
    plans.sort(key=lambda p: p["z"])
    return plans


def _tag(name, a: float, b: float, c: float, d: float, failing: bool, centre: tuple[float, float]) -> str:
    """A member's name beside the middle of its line, on the side toward the middle of the
    plan (so that it stays inside the drawing), kept within the drawing's width."""
    mx, my = (a + c) / 2, (b + d) / 2
    dx, dy = c - a, d - b
    norm = math.hypot(dx, dy) or 1.0
    ox, oy = -dy / norm * 9, dx / norm * 9
    if ox * (centre[0] - mx) + oy * (centre[1] - my) < 0:
        ox, oy = -ox, -oy
    text = _text(name)
    width = CHAR_W * len(str(name))
    if abs(dx) >= abs(dy):
        x, anchor = min(max(mx, width / 2 + 2), PLAN_W - width / 2 - 2), "middle"
    else:
        anchor = "start" if ox > 0 else "end"
        x = min(mx + ox, PLAN_W - width - 2) if ox > 0 else max(mx + ox, width + 2)
    return (f'<text class="tag{" f" if failing else ""}" x="{x:.1f}" y="{my + oy + 4:.1f}" '
            f'text-anchor="{anchor}">{text}</text>')
