"""One self-contained HTML file for a designed run: header, sortable index, frame
overview and, per member, the shear diagram above the stirrup elevation.

Everything is inline (CSS, SVG, a little JavaScript for sorting and filtering); nothing
is fetched. The drawings are built as strings from whole-run arrays: stations are
grouped by member once, scaled to pixels in one pass, and thinned to the points that
change the picture (the shear between loads is linear, and the stations are dense).
"""

from __future__ import annotations

import itertools
import json
import math
from html import escape
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pac
import pyarrow.parquet as pq

from postproc.engine import STATUSES
from postproc.report import CAUTION, write_atomic
from postproc.store import Run
from postproc.terms import did_you_mean

STATION_COLUMNS = ["member", "x_mm", "vu_kN", "vu_max_kN", "phi_vc_kN", "phi_vn_kN", "phi_vn_limit_kN",
                   "avmin_threshold_kN", "spacing_mm"]
COORDS = ["x_i_m", "y_i_m", "z_i_m", "x_j_m", "y_j_m", "z_j_m"]
STATUS_RANK = {"resize": 0, **{s: k + 1 for k, s in enumerate(s for s in STATUSES if s != "resize")}}

# the member drawing, in SVG user units (px)
W, LEFT, RIGHT = 960, 66, 22
PW = W - LEFT - RIGHT
TOP, PH = 52, 200  # plot area of the shear diagram
BEAM_Y = TOP + PH + 56  # top of the beam in the elevation
CHAR_W = 7.2  # mean advance of an 11 px sans-serif character, for label layout
THIN_TOL_PX = 0.25  # largest distance of a station left out of a line from the line drawn

# sequential, perceptually uniform ramp, low -> high: evenly spaced anchors of a viridis-like map,
# starting above its darkest fifth so that low values still show on the dark panel
RAMP = np.array([[0x41, 0x44, 0x87], [0x2a, 0x78, 0x8e], [0x22, 0xa8, 0x84], [0x7a, 0xd1, 0x51],
                 [0xfd, 0xe7, 0x25]], float)
NOT_DESIGNED = "#8d939b"
# control characters, DEL and the bidirectional overrides and isolates, shown as escapes
UNSEEN = {c: f"\\x{c:02x}" for c in (*range(0x20), 0x7F, *range(0x80, 0xA0))} | {
    c: f"\\u{c:04x}" for c in (*range(0x202A, 0x202F), *range(0x2066, 0x206A))}
VIEW_ANGLE = math.radians(20)  # plan axes X and Y rise this far from the horizontal (30 would be isometric)


def write_html_report(run: Run, out_path: Path, members: list[str] | None = None) -> Path:
    """Write the report of a designed run to ``out_path`` and return it.

    The index and the overview always cover every member; ``members`` limits the
    detail sections (diagram and elevation) to the ids listed.
    """
    if not run.has_design():
        raise ValueError(f"run '{run.name}' has no design; design it with `shearpost run` first")
    data = _Data.load(run)
    detail = data.detail_codes(members)
    linked = set(detail)
    body = [_header(data), _index(data, linked), _overview(data, linked), _details(data, detail)]
    page = _page(run.name, "".join(body), _legend_defs())
    return write_atomic(Path(out_path), lambda fh: fh.write(page))


class _Data:
    """The design tables joined with the input geometry; member k of ``m`` has code k."""

    def __init__(self, run: Run, m: pd.DataFrame, zones: pd.DataFrame, design_manifest: dict, combinations: int):
        self.run, self.m, self.zones = run, m, zones
        self.manifest, self.design_manifest, self.combinations = run.manifest(), design_manifest, combinations
        self.code = {name: k for k, name in enumerate(m["member"])}

    @classmethod
    def load(cls, run: Run) -> _Data:
        dp = run.design_path
        dm = pq.read_table(dp / "members.parquet").to_pandas()
        geo = run.members().to_pandas()
        keep = ["member", "kind", "level", "group", "length_m", "b_mm", "h_mm", "d_mm", "fc_mpa", "fyt_mpa",
                "support_i", "support_j", "face_i_mm", "face_j_mm", *COORDS]
        m = dm.merge(geo.reindex(columns=keep), on="member", how="left")
        m["clear_mm"] = m["length_m"] * 1e3 - m["face_i_mm"].fillna(0) - m["face_j_mm"].fillna(0)
        slug = m["member"].astype(str).str.replace(r"[^A-Za-z0-9_-]+", "-", regex=True).str.strip("-").str[:40]
        m["anchor"] = "m" + pd.Series(np.arange(len(m)), dtype=str) + "-" + slug
        m["rank"] = m["status"].map(STATUS_RANK).fillna(len(STATUS_RANK))
        ranked = np.lexsort((-m["utilization"].fillna(-np.inf).to_numpy(), m["rank"].to_numpy() > 0))
        order = np.empty(len(m), np.int64)
        order[ranked] = np.arange(len(m))
        m["order"] = order  # place in the default order: resize first, then utilization, largest first
        zones = pq.read_table(dp / "zones.parquet").to_pandas()
        manifest = json.loads((dp / "manifest.json").read_text(encoding="utf-8"))
        combos = pq.read_metadata(dp / "combinations.parquet").num_rows
        return cls(run, m, zones, manifest, combos)

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
        return sorted(codes.tolist(), key=lambda k: self.m["order"].iat[k])

    def stations(self, codes: list[int]) -> dict[str, np.ndarray]:
        """The station trace of the given members as arrays, grouped by code, in station order."""
        t = pq.read_table(self.run.design_path / "stations", columns=STATION_COLUMNS)  # one file per part
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


CSS = """
:root{--ink:#1b1d21;--mute:#5d636b;--line:#d9dce0;--panel:#262a31}
*{box-sizing:border-box}
body{font:14px/1.45 system-ui,"DejaVu Sans","Liberation Sans",Arial,sans-serif;color:var(--ink);margin:0;
background:#fafaf8}
main{max-width:1000px;margin:0 auto;padding:16px 20px 60px}
h1{font-size:22px;margin:8px 0 4px}h2{font-size:18px;margin:28px 0 8px;border-bottom:1px solid var(--line)}
h3{font-size:16px;margin:0 0 4px;word-break:break-all}h3 a{font-size:12px;font-weight:400}
nav a{margin-right:14px}a{color:#0b5394}
.meta{color:var(--mute);margin:2px 0}
.caution{border:2px solid var(--ink);background:#fff;padding:10px 14px;margin:12px 0;font-size:15px}
.chips span{display:inline-block;border:1px solid var(--line);border-radius:10px;padding:1px 9px;margin:2px 4px 2px 0;
background:#fff}
.st{font-size:12px;border:1px solid var(--line);border-radius:9px;padding:0 7px;white-space:nowrap;background:#fff}
.st-resize{font-weight:700;border:2px solid var(--ink)}
.st-designed{color:var(--ink)}
.st-other{color:var(--mute);font-style:italic}
.scroll{max-height:460px;overflow:auto;border:1px solid var(--line);background:#fff}
table{border-collapse:collapse;width:100%;font-size:13px}
th{position:sticky;top:0;background:#eef0f2;text-align:left;padding:4px 8px;cursor:pointer;user-select:none;
white-space:nowrap}
th[aria-sort=ascending]::after{content:" \\25B2"}th[aria-sort=descending]::after{content:" \\25BC"}
td{padding:2px 8px;border-top:1px solid #eef0f2;white-space:nowrap}
td.n,th.n{text-align:right;font-variant-numeric:tabular-nums}
tr.resize td{background:#f3f1ea}
#filter{margin:0 0 6px;padding:3px 6px;width:260px}
.member{border-top:1px solid var(--line);padding:14px 0 6px;content-visibility:auto;contain-intrinsic-size:auto 560px}
.facts{margin:2px 0;color:var(--mute);font-size:13px}
.msg{margin:6px 0;padding:4px 10px;border-left:3px solid var(--ink);background:#fff}
svg{max-width:100%;height:auto;display:block}
svg text{font:11px system-ui,"DejaVu Sans","Liberation Sans",Arial,sans-serif;fill:#33373d}
svg .ttl{font-size:12px;fill:var(--ink)}
.g{stroke:#eceef0}.ax{stroke:#4a4f56;fill:none}
.env{fill:#56b4e9;fill-opacity:.32;stroke:#0072b2;stroke-width:1.6;stroke-linejoin:round}
.cap{fill:none;stroke:#1b1d21;stroke-width:2.2;stroke-linejoin:round}
.vc{fill:none;stroke:#009e73;stroke-width:1.6;stroke-dasharray:7 4}
.avm{fill:none;stroke:#cc79a7;stroke-width:1.6;stroke-dasharray:2 3}
.lim{fill:none;stroke:#e69f00;stroke-width:1.6;stroke-dasharray:9 3 2 3}
.crit{stroke:#6b7079;stroke-width:1.2;stroke-dasharray:4 3}
.beam{fill:#f2f0ea;stroke:#4a4f56;stroke-width:1.2}.sup{fill:#c9ccd1}
.stir{stroke:#1b1d21;stroke-width:1}.dim{stroke:#6b7079;fill:none}
.panel{fill:var(--panel)}.strip{fill:#30353d}.pt{fill:#e8eaed}
.ov{stroke-width:2;stroke-linecap:round}.ovr{stroke-width:3.2;stroke-dasharray:7 4}
.nd{stroke:#8d939b;stroke-width:1.3;stroke-dasharray:5 4}
"""

JS = """
(function(){
  var t=document.getElementById('index-table');if(!t)return;
  var tb=t.tBodies[0],heads=t.tHead.rows[0].cells,coll=new Intl.Collator(undefined,{numeric:true});
  Array.prototype.forEach.call(heads,function(th,c){th.addEventListener('click',function(){
    var num=th.dataset.type==='num',dir=th.getAttribute('aria-sort')==='ascending'?-1:1;
    Array.prototype.forEach.call(heads,function(h){h.removeAttribute('aria-sort');});
    th.setAttribute('aria-sort',dir>0?'ascending':'descending');
    var rows=Array.prototype.map.call(tb.rows,function(r){
      var cell=r.cells[c],k=cell.dataset.k!==undefined?cell.dataset.k:cell.textContent;
      return [num?(k===''?NaN:+k):k,r];});
    rows.sort(function(a,b){
      if(num){if(isNaN(a[0]))return isNaN(b[0])?0:1;if(isNaN(b[0]))return -1;return dir*(a[0]-b[0]);}
      return dir*coll.compare(a[0],b[0]);});
    var f=document.createDocumentFragment();rows.forEach(function(r){f.appendChild(r[1]);});tb.appendChild(f);
  });});
  var q=document.getElementById('filter');
  if(q)q.addEventListener('input',function(){var s=q.value.toLowerCase();
    Array.prototype.forEach.call(tb.rows,function(r){r.hidden=s!==''&&r.textContent.toLowerCase().indexOf(s)<0;});});
})();
"""


def _page(run_name: str, body: str, defs: str) -> str:
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
            f'<meta name="viewport" content="width=device-width,initial-scale=1">'
            f"<title>shearpost report: {_text(run_name)}</title><style>{CSS}</style></head><body>"
            f'<svg width="0" height="0" style="position:absolute" aria-hidden="true"><defs>{defs}</defs></svg>'
            f"<main>{body}</main><script>{JS}</script></body></html>\n")


def _header(data: _Data) -> str:
    man, m = data.manifest, data.m
    created = str(man.get("created", ""))
    when = created.replace("T", " ")[:16] + (" UTC" if created.endswith(("+00:00", "Z")) else "")
    edition = data.design_manifest.get("code_edition") or man.get("code_edition", "")
    source = ("cases taken as already factored combinations" if data.design_manifest.get("combinations_prefactored")
              else "ACI 318-19 Table 5.3.1 from basic load cases")
    counts = m["status"].value_counts()
    shown = [*STATUSES, *sorted(set(counts.index) - set(STATUSES))]
    chips = "".join(f"<span>{int(counts[s]):,} {_text(s)}</span>" for s in shown if s in counts.index)
    warnings = [*man.get("warnings", []), *data.design_manifest.get("warnings", [])]
    warn = ""
    if warnings:
        items = "".join(f"<li>{_text(w)}</li>" for w in warnings[:200])
        more = f"<li>... and {len(warnings) - 200:,} more</li>" if len(warnings) > 200 else ""
        warn = f"<details><summary>{len(warnings):,} warning(s)</summary><ul>{items}{more}</ul></details>"
    return (f'<header id="top"><h1>shearpost design report</h1>'
            f'<p class="meta">run <b>{_text(man.get("run", data.run.name))}</b> &middot; created {_text(when)} '
            f"&middot; {_text(edition)} &middot; shearpost {_text(man.get('tool_version', ''))}</p>"
            f'<p class="meta">{len(m):,} members &middot; {data.combinations:,} combinations ({_text(source)}) '
            f"&middot; {int(m['stirrups_total'].fillna(0).sum()):,} stirrup sets, "
            f"{float(m['stirrup_mass_kg'].fillna(0).sum()):,.1f} kg</p>"
            f'<p class="chips">{chips}</p>'
            f'<div class="caution" role="note"><strong>Caution.</strong> {_text(CAUTION)}</div>{warn}'
            f'<nav><a href="#index">Index</a><a href="#overview">Overview</a><a href="#members">Members</a></nav>'
            f"</header>")


def _text(value) -> str:
    """Untrusted text (ids, labels, messages) for HTML: escaped, invisible controls made visible."""
    return escape(str(value).translate(UNSEEN))


def _status(status: str) -> str:
    cls = "st-resize" if status == "resize" else "st-designed" if status == "designed" else "st-other"
    return f'<span class="st {cls}">{_text(status)}</span>'


def _index(data: _Data, linked: set[int]) -> str:
    m = data.m.sort_values("order")
    util = m["utilization"].map(lambda u: "" if pd.isna(u) else f"{u:.3f}")
    mass = m["stirrup_mass_kg"].map(lambda v: "" if pd.isna(v) else f"{v:.1f}")
    text = {c: m[c].map(lambda v: "" if pd.isna(v) else _text(v)) for c in ("level", "group", "governing_case")}
    rows = []
    for k, name, anchor, status, rank, u, gov, lvl, grp, n, kg in zip(
            m.index, m["member"], m["anchor"], m["status"], m["rank"], util, text["governing_case"], text["level"],
            text["group"], m["stirrups_total"].fillna(0).astype(int), mass):
        label = _text(name)
        ref = f'<a href="#{anchor}">{label}</a>' if k in linked else label
        cls = ' class="resize"' if status == "resize" else ""
        rows.append(f"<tr{cls}><td>{ref}</td><td>{lvl}</td><td>{grp}</td><td data-k=\"{int(rank)}\">{_status(status)}"
                    f'</td><td class="n">{u}</td><td>{gov}</td><td class="n">{n}</td><td class="n">{kg}</td></tr>')
    head = "".join(f'<th data-type="{t}"{cls}>{h}</th>' for h, t, cls in (
        ("member", "str", ""), ("level", "str", ""), ("group", "str", ""), ("status", "num", ""),
        ("utilization", "num", ' class="n"'), ("governing combination", "str", ""),
        ("stirrup sets", "num", ' class="n"'), ("mass kg", "num", ' class="n"')))
    return (f'<section id="index"><h2>Index of members</h2>'
            f'<p class="meta">Members needing a resize first, then by utilization (largest first). '
            f"Click a column heading to sort.</p>"
            f'<input id="filter" type="search" placeholder="filter rows (member, level, status...)" '
            f'aria-label="filter">'
            f'<div class="scroll"><table id="index-table"><thead><tr>{head}</tr></thead>'
            f"<tbody>{''.join(rows)}</tbody></table></div></section>")


# ----------------------------------------------------------------------------- colours and numbers


def ramp(u: np.ndarray) -> np.ndarray:
    """Hex colours of utilizations on the sequential ramp, clamped to [0, 1]."""
    t = np.clip(np.nan_to_num(np.asarray(u, float), nan=0.0), 0.0, 1.0) * (len(RAMP) - 1)
    k = np.minimum(t.astype(int), len(RAMP) - 2)
    f = (t - k)[:, None]
    rgb = np.rint(RAMP[k] * (1 - f) + RAMP[k + 1] * f).astype(int)
    return np.array([f"#{r:02x}{g:02x}{b:02x}" for r, g, b in rgb.tolist()], dtype=object)


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
    if not codes:
        return f'<section id="members"><h2>Members</h2>{note}</section>'
    drawn = _Drawings(data, data.stations(codes), codes)
    parts = [f'<section id="members"><h2>Members</h2>{note}']
    records = data.m.to_dict("records")
    for k in codes:
        parts.append(_member_section(records[k], k, drawn))
    parts.append("</section>")
    return "".join(parts)


class _Drawings:
    """Per-member SVG fragments computed for all stations at once."""

    def __init__(self, data: _Data, st: dict[str, np.ndarray], codes: list[int]):
        m = data.m
        n = len(m)
        code = st["code"]
        self.has_st = np.zeros(n, bool)
        self.has_st[np.unique(code)] = True
        cs = m["clear_mm"].to_numpy(float)
        st_span = np.full(n, np.nan)
        np.fmax.at(st_span, code, st["x_mm"])
        self.cs = np.where(np.isfinite(cs) & (cs > 0), cs, st_span)
        self.sx = PW / np.where(self.cs > 0, self.cs, 1.0)

        top = np.zeros(n)
        for c in ("vu_max_kN", "phi_vc_kN", "phi_vn_kN", "avmin_threshold_kN"):
            np.fmax.at(top, code, st[c])
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
    pos = pq.read_table(data.run.design_path / "stirrups.parquet").to_pandas()
    pos = pos.assign(code=pos["member"].map(data.code))
    out = {int(c): np.sort(g["x_mm"].to_numpy(float)) for c, g in pos[pos["code"].isin(wanted)].groupby("code")}
    z = data.zones.assign(code=data.zones["member"].map(data.code))
    z = z[z["code"].isin(wanted)].sort_values(["code", "zone"], kind="stable")
    labels: dict[int, list] = {}
    for code, z0, z1, cnt, bar, legs, sp in zip(z["code"].tolist(), z["start_mm"].tolist(), z["end_mm"].tolist(),
                                                z["count"].tolist(), z["bar"].tolist(), z["legs"].tolist(),
                                                z["spacing_mm"].tolist()):
        text = f"{cnt} {bar} x{legs} @ {sp:g}" if cnt and math.isfinite(sp) else "no stirrups"
        labels.setdefault(int(code), []).append((z0, z1, text))
    return out, labels


def _given(v) -> bool:
    """Not missing: neither None, NA, NaN nor an empty string."""
    return v is not None and v is not pd.NA and v == v and v != ""


def _fmt(v, spec: str = ".1f", unit: str = "") -> str:
    return f"{v:{spec}}{unit}" if _given(v) else "n/a"


def _member_section(r: dict, k: int, d: _Drawings) -> str:
    name = _text(r["member"])
    where = " &middot; ".join(f"{c} {_text(r[c])}" for c in ("level", "group") if _given(r[c]))
    geo = ""
    if _given(r["b_mm"]):
        geo = (f"b &times; h = {r['b_mm']:g} &times; {r['h_mm']:g} mm, d = {r['d_mm']:g} mm &middot; "
               f"f&prime;c {r['fc_mpa']:g} MPa, fyt {r['fyt_mpa']:g} MPa &middot; "
               f"clear span {d.cs[k]:,.0f} mm &middot; "
               f"supports {_text(r['support_i'])} / {_text(r['support_j'])}")
    facts = [p for p in (where, geo) if p]
    if _given(r["utilization"]):
        crit = lambda c: f" ({_text(r[c])})" if _given(r[c]) else ""
        facts.append(f"utilization {r['utilization']:.3f}, {_text(r['governing_case'])} &middot; "
                     f"design Vu: i {_fmt(r['vu_design_i_kN'], '.1f', ' kN')}{crit('crit_i')}, "
                     f"j {_fmt(r['vu_design_j_kN'], '.1f', ' kN')}{crit('crit_j')} &middot; "
                     f"&phi;Vc {_fmt(r['phi_vc_kN'], '.1f', ' kN')} &middot; "
                     f"&phi;Vn,max {_fmt(r['phi_vn_limit_kN'], '.1f', ' kN')} (22.5.1.2)")
    if r["status"] == "designed":
        facts.append(f"{int(r['stirrups_total']):,} stirrup sets, {_fmt(r['stirrup_mass_kg'], '.1f', ' kg')}")
    msg = f'<p class="msg">{_text(r["message"])}</p>' if _given(r["message"]) else ""
    svg = _member_svg(r, k, d) if d.has_st[k] else ""
    lines = "".join(f'<p class="facts">{p}</p>' for p in facts)
    return (f'<section class="member" id="{r["anchor"]}"><h3>{name} {_status(r["status"])} '
            f'<a class="meta" href="#index" title="back to the index">&uarr; index</a></h3>{lines}{msg}{svg}</section>')


LEGEND = (("env", "Vu envelope (all combinations)"), ("cap", "\u03c6Vn provided"), ("vc", "\u03c6Vc"),
          ("avm", "Av,min threshold (9.6.3.1)"), ("lim", "\u03c6Vn,max (22.5.1.2)"),
          ("crit", "critical section (9.4.3.2)"))


def _legend_id(cap: bool, lim: bool) -> str:
    return f"lg{int(cap)}{int(lim)}"


def _legend_defs() -> str:
    """One legend per combination of optional series, defined once and placed with <use>."""
    out = []
    for cap, lim in itertools.product((False, True), repeat=2):
        shown = {"env", "vc", "avm", "crit"} | {k for k, on in (("cap", cap), ("lim", lim)) if on}
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
        out.append(f'<g id="{_legend_id(cap, lim)}">{"".join(items)}</g>')
    return "".join(out)


def _tspans(xs, ys, labels) -> str:
    return "".join(f'<tspan x="{_g(x)}" y="{_g(y)}">{t}</tspan>' for x, y, t in zip(xs, ys, labels))


def _member_svg(r: dict, k: int, d: _Drawings) -> str:
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
    p = [f'<use href="#{_legend_id(k in d.cap, bool(d.show_lim[k]))}" x="{LEFT}" y="16"/>',
         f'<path class="g" d="{"".join(f"M{LEFT},{_g(y)}h{PW}" for y in ypx[1:])}'
         f'{"".join(f"M{_g(x)},{TOP}V{base}" for x in xpx[1:])}"/>',
         f'<text text-anchor="end">{_tspans([LEFT - 6] * len(yv), [y + 4 for y in ypx], map("{:g}".format, yv))}'
         f"</text>",
         f'<text text-anchor="middle">{_tspans(xpx, [base + 15] * len(xv), map("{:,.0f}".format, xv))}</text>',
         f'<text class="ttl" text-anchor="middle" transform="rotate(-90)" x="{-(TOP + PH / 2):g}" y="16">'
         f"shear (kN)</text>",
         f'<text class="ttl" text-anchor="middle" x="{LEFT + PW / 2:g}" y="{base + 32}">'
         f"distance from the face of support i (mm)</text>"]
    if k in d.env:
        p.append(f'<path class="env" d="M{LEFT},{base}L{d.env[k]}L{_g(x_end)},{base}Z"/>')
    for key in ("lim", "avm", "vc", "cap"):
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
    if k in d.stirrups or k in d.zone_labels:
        elev, height = _elevation(r, cs, sx, d.stirrups.get(k, np.array([])), d.zone_labels.get(k, []))
        p.append(elev)
    label = _text(f"shear diagram and stirrup elevation of member {r['member']}")
    return (f'<svg class="mem" viewBox="0 0 {W} {height:g}" width="{W}" height="{height:g}" role="img" '
            f'aria-label="{label}">{"".join(p)}</svg>')


def _elevation(r: dict, cs: float, sx: float, pos: np.ndarray, labels: list) -> tuple[str, float]:
    """The beam outline over the clear span, a line per stirrup, the zones dimensioned below."""
    y0 = BEAM_Y
    hpx = float(np.clip(r["h_mm"] * sx, 30.0, 80.0))
    wpx = cs * sx
    p = [f'<text class="ttl" x="{LEFT}" y="{y0 - 9}">stirrup elevation, h = {r["h_mm"]:g} mm '
         f'{"(to scale)" if hpx == r["h_mm"] * sx else "(depth not to scale)"}</text>']
    for side, x in (("support_i", LEFT - 12), ("support_j", LEFT + wpx)):
        if r[side] != "free":
            p.append(f'<rect class="sup" x="{_g(x)}" y="{y0 - 8}" width="12" height="{_g(hpx + 16)}"/>')
    p.append(f'<rect class="beam" x="{LEFT}" y="{y0}" width="{_g(wpx)}" height="{_g(hpx)}"/>')
    if len(pos):
        top, length = _g(y0 + 3), _g(hpx - 6)
        xs = np.round(LEFT + pos * sx, 1).tolist()
        p.append(f'<path class="stir" d="{"".join(f"M{x:g} {top}v{length}" for x in xs)}"/>')
    dim_y = y0 + hpx + 10
    edges = sorted({round(LEFT + e * sx, 1) for z0, z1, _ in labels for e in (z0, z1)})
    p.append(f'<path class="dim" d="M{LEFT},{_g(dim_y)}H{_g(LEFT + wpx)}'
             f'{"".join(f"M{x:g},{_g(dim_y - 4)}v8" for x in edges)}"/>')
    rows_end: list[float] = []
    texts = []
    for z0, z1, text in labels:
        w = CHAR_W * len(text)
        cx = min(max(LEFT + (z0 + z1) / 2 * sx, LEFT + w / 2), LEFT + wpx - w / 2)
        row = next((i for i, e in enumerate(rows_end) if cx - w / 2 > e + 8), len(rows_end))
        if row == len(rows_end):
            rows_end.append(-np.inf)
        rows_end[row] = cx + w / 2
        texts.append(f'<tspan x="{_g(cx)}" y="{_g(dim_y + 15 + 14 * row)}">{_text(text)}</tspan>')
    p.append(f'<text text-anchor="middle">{"".join(texts)}</text>')
    return "".join(p), round(dim_y + 15 + 14 * max(len(rows_end) - 1, 0) + 10)


# ----------------------------------------------------------------------------- overview


def _overview(data: _Data, linked: set[int]) -> str:
    m = data.m
    xyz = m[COORDS].to_numpy(float)
    ok = np.isfinite(xyz).all(axis=1)
    if ok.any():
        missing = int((~ok).sum())
        note = f" {missing:,} member(s) without coordinates are not drawn." if missing else ""
        return (f'<section id="overview"><h2>Frame overview</h2><p class="meta">Axonometric view of the members '
                f"from their end coordinates, coloured by utilization; members not designed are grey and dashed, "
                f"members needing a resize are dashed in the top colour. Click a member to open its section.{note}</p>"
                f"{_frame_svg(data, ok, linked)}</section>")
    return (f'<section id="overview"><h2>Utilization by level</h2><p class="meta">The frame overview needs member '
            f"coordinates (IFC geometry); this run's members table has none, so each member's utilization is shown "
            f"as a tick on the strip of its level.</p>{_levels_svg(data)}</section>")


def _colour_bar(x: float, y: float) -> str:
    stops = "".join(f'<stop offset="{k / (len(RAMP) - 1):g}" stop-color="{c}"/>'
                    for k, c in enumerate(ramp(np.linspace(0, 1, len(RAMP)))))
    ticks = "".join(f'<tspan x="{x + 240 * t:g}" y="{y + 26}">{t:g}</tspan>' for t in (0, 0.25, 0.5, 0.75, 1.0))
    return (f'<linearGradient id="ramp">{stops}</linearGradient>'
            f'<text class="pt" x="{x}" y="{y - 6}">utilization (Vu / capacity, worst station)</text>'
            f'<rect x="{x}" y="{y}" width="240" height="12" fill="url(#ramp)"/>'
            f'<text class="pt" text-anchor="middle">{ticks}</text>')


def _frame_svg(data: _Data, ok: np.ndarray, linked: set[int]) -> str:
    m = data.m[ok]
    x1, y1, z1, x2, y2, z2 = (m[c].to_numpy(float) for c in COORDS)
    ca, sa = math.cos(VIEW_ANGLE), math.sin(VIEW_ANGLE)
    u1, u2 = (x1 - y1) * ca, (x2 - y2) * ca
    w1, w2 = z1 + (x1 + y1) * sa, z2 + (x2 + y2) * sa
    umin, umax = min(u1.min(), u2.min()), max(u1.max(), u2.max())
    wmin, wmax = min(w1.min(), w2.min()), max(w1.max(), w2.max())
    pad, legend_h = 24.0, 64.0
    scale = min((W - 2 * pad) / max(umax - umin, 1e-9), 640.0 / max(wmax - wmin, 1e-9))
    height = (wmax - wmin) * scale + 2 * pad + legend_h
    X = lambda u: pad + (u - umin) * scale + (W - 2 * pad - (umax - umin) * scale) / 2
    Y = lambda w: pad + (wmax - w) * scale
    status = m["status"].to_numpy(object)
    util = m["utilization"].to_numpy(float)
    colour = ramp(util)
    kind = np.where(status == "designed", 1, np.where(status == "resize", 2, 0))
    order = np.lexsort((np.nan_to_num(util, nan=-1.0), kind))
    lines = []
    for k, anchor, a, b, c, e, name, st, u, col, kd in zip(
            m.index[order], m["anchor"].to_numpy(object)[order], X(u1)[order], Y(w1)[order], X(u2)[order],
            Y(w2)[order], m["member"].to_numpy(object)[order], status[order], util[order], colour[order], kind[order]):
        cls = "ov" if kd == 1 else "ov ovr" if kd == 2 else "nd"
        stroke = f' stroke="{col}"' if kd else ""
        tip = _text(f"{name}: {st}" + ("" if np.isnan(u) else f", utilization {u:.3f}"))
        line = f'<path class="{cls}"{stroke} d="M{a:.1f},{b:.1f}L{c:.1f},{e:.1f}"><title>{tip}</title></path>'
        lines.append(f'<a href="#{anchor}">{line}</a>' if k in linked else line)
    ly = height - legend_h + 26
    legend = (_colour_bar(pad + 70, ly)
              + f'<path class="nd" d="M{pad + 380},{ly + 6}h28"/><text class="pt" x="{pad + 414}" y="{ly + 10}">'
              f"not designed</text>"
              + f'<path class="ov ovr" stroke="{ramp(np.array([1.0]))[0]}" d="M{pad + 520},{ly + 6}h28"/>'
              f'<text class="pt" x="{pad + 554}" y="{ly + 10}">resize (section too small)</text>'
              + _axes(W - 60.0, ly + 12))
    return (f'<svg viewBox="0 0 {W} {height:.0f}" width="{W}" height="{height:.0f}" role="img" '
            f'aria-label="isometric view of the frame coloured by utilization">'
            f'<rect class="panel" width="{W}" height="{height:.0f}" rx="4"/>{"".join(lines)}{legend}</svg>')


def _axes(x: float, y: float) -> str:
    """A small triad showing the model's X, Y and Z directions in the view."""
    ca, sa, r = math.cos(VIEW_ANGLE), math.sin(VIEW_ANGLE), 26.0
    tips = (("X", r * ca, -r * sa), ("Y", -r * ca, -r * sa), ("Z", 0.0, -r))
    return "".join(f'<path stroke="#e8eaed" d="M{x:g},{y:g}l{dx:.1f},{dy:.1f}"/>'
                   f'<text class="pt" text-anchor="middle" x="{x + 1.3 * dx:.1f}" y="{y + 1.3 * dy + 4:.1f}">{t}</text>'
                   for t, dx, dy in tips)


def _levels_svg(data: _Data) -> str:
    m = data.m
    level = m["level"].where(m["level"].notna() & (m["level"].astype(str) != ""), "(no level)").astype(str)
    levels = list(dict.fromkeys(level))
    util = m["utilization"].to_numpy(float)
    finite = np.isfinite(util)
    hi = max(1.0, min(1.5, math.ceil(np.nanmax(util, initial=0.0) * 10) / 10))
    x0, x1, row, top = 170.0, W - 30.0, 26.0, 52.0
    X = lambda u: x0 + np.clip(u, 0, hi) / hi * (x1 - x0)
    row_of = {lv: k for k, lv in enumerate(levels)}
    y = top + np.array([row_of[v] for v in level]) * row
    status = m["status"].to_numpy(object)
    colour = np.where(status == "designed", ramp(util), np.where(status == "resize", ramp(np.ones(len(m))),
                                                                NOT_DESIGNED))
    resize = ' class="ovr"'
    ticks = [f'<path{resize if st == "resize" else ""} stroke="{col}" d="M{xx:.1f} {yy + 4:g}v{row - 8:g}">'
             f"<title>{_text(f'{name} ({st}): utilization {u:.3f}')}</title></path>"
             for name, st, u, col, xx, yy in zip(m["member"][finite], status[finite], util[finite], colour[finite],
                                                 X(util[finite]), y[finite])]
    counts = level.value_counts()
    labels = "".join(f'<tspan x="{x0 - 12}" y="{top + k * row + row / 2 + 4:g}">{_text(lv)} ({counts[lv]:,})</tspan>'
                     for k, lv in enumerate(levels))
    bottom = top + len(levels) * row
    step = 0.1 if hi <= 1.0 else 0.25
    grid = np.arange(0.0, hi + 1e-9, step)
    axis = "".join(f'<tspan x="{X(g):.1f}" y="{bottom + 16:g}">{g:g}</tspan>' for g in grid)
    strips = "".join(f'<rect x="{x0}" y="{top + k * row + 2:g}" width="{x1 - x0:g}" height="{row - 4:g}" '
                     f'class="strip"/>' for k in range(len(levels)))
    height = bottom + 84
    return (f'<svg viewBox="0 0 {W} {height:g}" width="{W}" height="{height:g}" role="img" '
            f'aria-label="utilization of the members by level">'
            f'<rect class="panel" width="{W}" height="{height:g}" rx="4"/>{strips}'
            f'<path stroke="#59606a" d="{"".join(f"M{X(g):.1f},{top - 4:g}V{bottom:g}" for g in grid)}"/>'
            f'<path stroke="#e8eaed" stroke-dasharray="3 3" d="M{X(1.0):.1f},{top - 10:g}V{bottom + 4:g}"/>'
            f'<g stroke-width="1.6" stroke-opacity=".85">{"".join(ticks)}</g>'
            f'<text class="pt" text-anchor="end">{labels}</text>'
            f'<text class="pt" text-anchor="middle">{axis}</text>'
            f'<text class="pt" x="{x0}" y="{top - 16:g}">level (members); grey: not designed; utilization &rarr;</text>'
            f'{_colour_bar(x0, bottom + 50)}</svg>')
