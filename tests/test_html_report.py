"""The HTML report: self-contained, one section per member, drawings that match the design
tables, untrusted ids escaped, an overview from coordinates, and a real browser render."""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from postproc import cli
from postproc.html_report import BANDS, COORDS, LEFT, PW, THIN_TOL_PX, thin, utilization_band, write_html_report
from postproc.report import CAUTION
from postproc.store import SEALED_FOLDERS, Run, Store, seal_folder
from tests.conftest import beam, design, rows_from_function

CHROMIUM = Path("/usr/bin/chromium")
ODD_ID = '<b>&"x'
UNSEEN_IDS = ["\x1b[31mred\x1b[0m", "tab\there", "\u202eB1", "L" * 300]  # controls, a bidi override, a long id


@pytest.fixture(scope="module")
def demo(demo_designed, tmp_path_factory):
    run = Store(demo_designed.store).runs()[-1]
    path = write_html_report(run, tmp_path_factory.mktemp("html") / "report.html")
    members = pq.read_table(run.design_path / "members.parquet").to_pandas().set_index("member")
    zones = pq.read_table(run.design_path / "zones.parquet").to_pandas()
    return run, path, path.read_text(encoding="utf-8"), members, zones


@pytest.fixture(scope="module")
def small(tmp_path_factory):
    """A run with ids full of markup and control characters, a resize, a column and a plain beam."""
    tmp = tmp_path_factory.mktemp("odd")
    members = [beam(ODD_ID, 6.0, level="<i>L1</i>"), beam("OK", 6.0), *(beam(i, 6.0) for i in UNSEEN_IDS),
               beam("SMALL", 6.0, b_mm=250.0, h_mm=500.0),
               {**beam("COL", 3.0), "kind": "column", "db_long_mm": 20.0, "n_long": 8}]
    forces = (rows_from_function(ODD_ID, "U", 6.0, lambda x: 150 - 50 * x, n=7)
              + rows_from_function("OK", "U", 6.0, lambda x: 100 - 33 * x, n=7)
              + sum((rows_from_function(i, "U", 6.0, lambda x: 90 - 30 * x, n=7) for i in UNSEEN_IDS), [])
              + rows_from_function("SMALL", "U", 6.0, lambda x: 900 * (1 - x / 3), n=3)
              + rows_from_function("COL", "U", 3.0, lambda x: 12.0, n=3))
    res = design(tmp, members, forces)
    assert res.code == cli.EXIT_RESIZE
    return Store(res.store).runs()[-1]


def sections(html: str) -> dict[str, str]:
    """Member name (as written, escaped) -> the HTML of its detail section."""
    starts = [m.start() for m in re.finditer(r'<section class="member"', html)]
    ends = [*starts[1:], html.index("</main>")]
    out = {}
    for a, b in zip(starts, ends):
        name = re.match(r'<section class="member" id="[^"]*"><h3>(.*?) <span', html[a:b]).group(1)
        out[name] = html[a:b]
    return out


def scale_of(section: str) -> tuple[float, float]:
    """kN per px and the y of 0 kN, from the tick labels of the shear axis."""
    ticks = re.search(r'<text text-anchor="end">(.*?)</text>', section).group(1)
    pairs = [(float(y), float(v)) for y, v in re.findall(r'y="([\d.]+)">([\d.]+)</tspan>', ticks)]
    (y0, v0), (y1, v1) = pairs[0], pairs[-1]
    return (v1 - v0) / (y0 - y1), y0 - 4  # labels sit 4 px below their gridline


def points(attr: str) -> np.ndarray:
    return np.array([[float(a) for a in p.split(",")] for p in attr.split()])


def test_self_contained_with_the_caution(demo):
    run, _, html, _, _ = demo
    for bad in ("http://", "https://", "<script src", "<link", "@import", "url(http"):
        assert bad not in html
    assert html.startswith("<!DOCTYPE html>") and CAUTION in html
    assert "ACI 318-19" in html and f"created {run.manifest()['created'][:10]}" in html


def test_one_section_per_member_and_every_link_lands(demo):
    _, _, html, members, _ = demo
    found = sections(html)
    assert sorted(found) == sorted(members.index)
    ids = re.findall(r'<section class="member" id="([^"]+)"', html)
    assert len(set(ids)) == len(members)
    index = index_of(html)
    links = set(re.findall(r'<td><a href="#([^"]+)">', index))
    assert links == set(ids)
    assert index.count("<tr") == len(members) + 1  # the index lists every member once, plus its heading
    joints = html[html.index('<section id="joints">'):html.index('<section id="members">')]
    assert set(re.findall(r'<a href="#([^"]+)">', joints)) <= set(ids)  # the joints' beams link to their sections


def test_index_puts_failures_first_then_utilization(small, tmp_path):
    run = small
    html = write_html_report(run, tmp_path / "r.html").read_text(encoding="utf-8")
    rows = re.findall(r"<tr[^>]*><td>(?:<a [^>]*>)?(.*?)(?:</a>)?</td>.*?<td class=\"n\">([\d.]*)</td>", html)
    names = [n for n, _ in rows]
    assert names[0] == "SMALL" and names[-1] == "COL"  # resize first; then by utilization (the column's is least)
    utils = [float(u) for n, u in rows[1:]]
    assert utils == sorted(utils, reverse=True)


def test_known_member_draws_envelope_capacity_and_its_values(demo):
    run, _, html, members, _ = demo
    sec = sections(html)["L2-SB-23"]
    assert '<path class="env"' in sec and '<polyline class="cap"' in sec
    assert '<polyline class="vc"' in sec and '<polyline class="avm"' in sec
    assert sec.count('class="crit"') == 2  # girder ends: critical section at both faces
    kn_per_px, y_zero = scale_of(sec)
    env = points(re.search(r'class="env" d="M[\d.,]+L(.*?)L[\d.,]+Z"', sec).group(1))
    cap = points(re.search(r'class="cap" points="([^"]+)"', sec).group(1))
    st = pq.read_table(run.design_path / "stations").to_pandas()
    st = st[st.member == "L2-SB-23"]
    assert (y_zero - env[:, 1]).max() * kn_per_px == pytest.approx(st.vu_max_kN.max(), rel=0.01)
    assert (y_zero - cap[:, 1]).min() * kn_per_px == pytest.approx(st.phi_vn_kN.min(), rel=0.01)
    assert len(env) < len(st) / 4  # the linear envelope is drawn with few points
    assert env[:, 0].min() == pytest.approx(LEFT) and env[:, 0].max() == pytest.approx(LEFT + PW)


def test_stirrup_lines_match_the_counts_and_the_zones(demo):
    run, _, html, members, zones = demo
    found = sections(html)
    geo = run.members().to_pandas().set_index("member")
    clear = geo.length_m * 1e3 - geo.face_i_mm - geo.face_j_mm
    positions = pq.read_table(run.design_path / "stirrups.parquet").to_pandas()
    for name, row in members[members.status == "designed"].iterrows():
        d = re.search(r'class="stir" d="([^"]*)"', found[name])
        xs = np.array([float(v) for v in re.findall(r"M([\d.]+) ", d.group(1))])
        assert len(xs) == row.stirrups_total, name
        sx = PW / clear[name]
        z = zones[zones.member == name].sort_values("zone")
        between = (z.start_mm.to_numpy()[1:] - z.end_mm.to_numpy()[:-1]).max(initial=0.0)  # gaps from zone to zone
        widest = max(z.spacing_mm.max(), between)
        assert np.diff(xs).max() <= widest * sx + 0.1, name  # no gap wider than a zone's spacing or a zone's edge
        stored = np.sort(positions.x_mm[positions.member == name].to_numpy())
        np.testing.assert_allclose(xs, LEFT + stored * sx, atol=0.06, err_msg=name)  # drawn where they are
    # L2-SB-23: one zone of 32 @ 250 from 50 mm, the last 200 mm from face j (clear span 8000 mm)
    xs = np.array([float(v) for v in re.findall(r"M([\d.]+) ", re.search(r'class="stir" d="([^"]*)"',
                                                                        found["L2-SB-23"]).group(1))])
    mm = (xs - LEFT) * 8000.0 / PW
    assert len(mm) == 32 and mm[0] == pytest.approx(50, abs=1) and mm[-1] == pytest.approx(7800, abs=1)
    assert np.diff(mm) == pytest.approx(250, abs=1.5)
    z = zones[zones.member == "L2-SB-23"].iloc[0]
    assert f"{z['count']} {z.bar} x{z.legs} @ {z.spacing_mm:g}" in found["L2-SB-23"]


def test_members_not_designed_show_status_and_message(demo):
    _, _, html, members, _ = demo
    found = sections(html)
    col = found["P1-C-A1"]
    # a column of a special frame: two shear diagrams (V and Vb, with its Ve), then its elevation with lo shaded
    assert "designed" in col and col.count('<svg class="mem"') == 2 and "Vu parallel to b (Vb)" in col
    assert "column elevation" in col and 'class="lo"' in col and 'class="ve"' in col and 'class="stir"' in col


def test_members_argument_limits_the_details_not_the_index(demo, tmp_path):
    run, _, _, members, _ = demo
    html = write_html_report(run, tmp_path / "one.html", ["L2-SB-23"]).read_text(encoding="utf-8")
    assert list(sections(html)) == ["L2-SB-23"]
    assert index_of(html).count("<tr") == len(members) + 1
    assert len(re.findall(r'<td><a href="#', index_of(html))) == 1
    with pytest.raises(ValueError, match="NOPE"):
        write_html_report(run, tmp_path / "bad.html", ["NOPE"])


def test_untrusted_ids_are_escaped_and_anchors_safe(small, tmp_path):
    run = small
    html = write_html_report(run, tmp_path / "r.html").read_text(encoding="utf-8")
    assert ODD_ID not in html and "<i>L1</i>" not in html
    assert "&lt;b&gt;&amp;&quot;x" in html and "&lt;i&gt;L1&lt;/i&gt;" in html
    for ref in re.findall(r'(?:id|href)="#?([^"]*)"', html):
        assert re.fullmatch(r"[A-Za-z0-9_-]*", ref), ref
    assert "&lt;b&gt;&amp;&quot;x" in sections(html)
    assert not any(ch in html for ch in "\x1b\t\u202e")  # invisible characters are shown, not passed on
    for shown in ("\\x1b[31mred\\x1b[0m", "tab\\x09here", "\\u202eB1", "L" * 300):
        assert shown in sections(html)


def overview_of(html: str) -> str:
    end = html.index('<section id="joints">') if '<section id="joints">' in html else html.index('<section id="members">')
    return html[html.index('<section id="overview">'):end]


def index_of(html: str) -> str:
    return html[html.index('<section id="index">'):html.index('<section id="overview">')]


def test_strips_and_no_plans_without_coordinates(demo, tmp_path):
    run, _, _, members, _ = demo
    copy = Run(shutil.copytree(run.path, tmp_path / "store" / run.name))  # the demo without its coordinates
    pq.write_table(run.members().drop_columns(COORDS), copy.path / "members.parquet")
    seal_folder(copy.path, skip=SEALED_FOLDERS)  # edited on purpose: sealed anew
    html = write_html_report(copy, tmp_path / "r.html").read_text(encoding="utf-8")
    overview = overview_of(html)
    assert "Overview by level" in overview and "No plans" in overview and "gives no member coordinates" in overview
    assert "<figure" not in overview
    given = members.join(Store(demo[0].path.parent).run(demo[0].name).members().to_pandas().set_index("member").level)
    for level, n in given.level.value_counts().items():  # a strip per level, its members counted
        assert f'<div class="lv">{level} ({n:,})</div>' in overview
    for name in members.index[(members.utilization > 0.95) & (members.status == "designed")]:
        assert f">{name}</a>" in overview  # the 0.95-1.0 band is named
    for word in ("wireframe", "axonometric", "isometric", 'class="panel"'):
        assert word not in html


def test_needs_action_leads_the_report(small, tmp_path):
    html = write_html_report(small, tmp_path / "r.html").read_text(encoding="utf-8")
    box = html[html.index('<section class="action"'):html.index("</section>", html.index('<section class="action"'))]
    assert "Needs action: 1 member" in box and ">SMALL</a>" in box and "22.5.1.2" in box
    assert html.index('<section class="action"') < html.index('<section id="index">')
    chips = re.findall(r'<span(?: class="act")?>(\d+) ([a-z-]+)</span>', html[:html.index('class="caution"')])
    assert chips[0] == ("1", "resize")  # the chips start with the statuses needing action


def test_plans_from_coordinates(small, tmp_path):
    run = small
    copy = Run(shutil.copytree(run.path, tmp_path / "store" / run.name))  # the same run, its members placed in 3-D
    table = run.members()
    n = table.num_rows
    at = np.arange(n, dtype=float) * 6.0
    z_top = np.full(n, 3.0)
    is_col = np.array([k == "column" for k in table.column("kind").to_pylist()])
    coords = {"x_i_m": at, "y_i_m": np.zeros(n), "z_i_m": np.where(is_col, 0.0, z_top),
              "x_j_m": np.where(is_col, at, at + 6.0), "y_j_m": np.zeros(n), "z_j_m": z_top}
    for name in COORDS:
        table = table.drop_columns([name]) if name in table.column_names else table
        table = table.append_column(name, pa.array(coords[name]))
    pq.write_table(table, copy.path / "members.parquet")
    seal_folder(copy.path, skip=SEALED_FOLDERS)  # the copy is a new run: its manifest lists the new file
    html = write_html_report(copy, tmp_path / "r.html").read_text(encoding="utf-8")
    overview = overview_of(html)
    plans = re.findall(r'<figure class="plan">(.*?)</figure>', overview, re.S)
    assert len(plans) == 2  # the beams' two levels: <i>L1</i> and none; the column is drawn as a square
    drawn = "".join(plans)
    assert drawn.count('<a href="#m') == n - 1  # every beam a line linked to its section
    assert drawn.count('class="col"') == 2  # the column, under both levels at its top z = 3 m
    assert drawn.count('class="u4"') == 1  # SMALL (resize): the heavy dashed line ...
    assert re.search(r'<text class="tag f"[^>]*>SMALL</text>', drawn)  # ... and its name beside it
    for word in ("wireframe", "isometric", ">X<", ">Y<", ">Z<", 'class="panel"'):
        assert word not in overview  # no axis marker, no dark panel


def test_bands():
    # the overview's bands: <= 0.5, 0.5-0.8, 0.8-0.95, 0.95-1.0, > 1.0 (the README's legend)
    util = np.array([0.2, 0.5, 0.51, 0.8, 0.9, 0.95, 0.99, 1.0, 1.2, 0.7, np.nan])
    status = np.array(["designed"] * 8 + ["resize", "deep-beam", "not-covered"], dtype=object)
    assert utilization_band(util, status).tolist() == [0, 0, 1, 1, 2, 2, 3, 3, 4, -1, -1]
    assert BANDS == (0.5, 0.8, 0.95, 1.0)


def test_thinning_keeps_corners_jumps_and_curves():
    x = np.linspace(0, 800, 161)
    line = thin(np.zeros(161, int), x, 100 + 0.1 * x)
    assert line.sum() == 2
    xj = np.r_[x[:81], x[80:]]  # a jump: two points at one x
    yj = np.r_[np.full(81, 50.0), np.full(81, 120.0)]
    kept = thin(np.zeros(162, int), xj, yj)
    assert kept.sum() == 4 and kept[80] and kept[81]
    y = 100 + 30 * (x / 800) * (1 - x / 800) * 4  # a gentle curve, 30 px high
    k = thin(np.zeros(161, int), x, y)
    drawn = np.interp(x, x[k], y[k])
    assert np.abs(drawn - y).max() <= THIN_TOL_PX * 1.02 and k.sum() < 30  # slope <= 0.15: vertical ~ normal
    two = thin(np.r_[np.zeros(5, int), np.ones(5, int)], np.tile(np.arange(5.0), 2), np.zeros(10))
    assert list(np.flatnonzero(two)) == [0, 4, 5, 9]  # members never share a line


@pytest.fixture(scope="module")
def ifc_demo(tmp_path_factory):
    """The demo designed from its IFC model: members with coordinates, so the report has plans."""
    tmp = tmp_path_factory.mktemp("ifc")
    assert cli.main(["demo", "--ifc", "--store", str(tmp / "store"), "--out", str(tmp / "out"), "--json"]) == 0
    return tmp / "out" / "report.html"


@pytest.mark.skipif(not CHROMIUM.exists(), reason="Debian chromium not installed (apt-get install chromium)")
@pytest.mark.parametrize("width", [1400, 800])
def test_renders_in_a_headless_browser(demo, ifc_demo, tmp_path, width):
    """Both reports (banded list without coordinates; plans with them) render at a desktop and a
    narrow width. SHEARPOST_SCREENSHOTS=folder keeps the pictures, to look at them."""
    keep = os.environ.get("SHEARPOST_SCREENSHOTS")
    for name, path in (("csv", demo[1]), ("ifc", ifc_demo)):
        png = (Path(keep) if keep else tmp_path) / f"report-{name}-{width}.png"
        png.parent.mkdir(parents=True, exist_ok=True)
        subprocess.run([str(CHROMIUM), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                        "--no-first-run", "--disable-background-networking", "--disable-component-update",
                        "--disable-sync", "--hide-scrollbars", f"--user-data-dir={tmp_path / 'profile'}",
                        f"--screenshot={png}", f"--window-size={width},3000", path.as_uri()],
                       check=True, capture_output=True, timeout=180)
        assert png.exists() and png.stat().st_size > 20_000
        try:
            from PIL import Image
        except ImportError:  # Pillow is optional: the size check stands
            continue
        with Image.open(png) as im:
            assert im.size == (width, 3000)
            rgb = im.convert("RGB")
            assert rgb.getcolors(maxcolors=256) is None  # far more than a few colours: a drawn page
            small = rgb.resize((50, 150))
            light = sum(1 for x in range(50) for y in range(150) if sum(small.getpixel((x, y))) > 600)
            assert light > 0.8 * 50 * 150  # a light page: no dark panel


def test_strut_and_tie_members_draw_their_truss_with_each_utilization(demo):
    """The demo's transfer girder (end region j by strut-and-tie): its section draws the truss of
    the stored model, every strut, tie and node with the utilization stored for it."""
    run, _, html, members, _ = demo
    tg = sections(html)["L1-TG-B34a"]
    assert "strut-and-tie+sectional" in tg and 'class="mem truss"' in tg
    struts = pq.read_table(run.design_path / "stm_struts.parquet").to_pandas()
    ties = pq.read_table(run.design_path / "stm_ties.parquet").to_pandas()
    nodes = pq.read_table(run.design_path / "stm_nodes.parquet").to_pandas()
    truss = tg[tg.index('class="mem truss"'):]
    for df, what in ((struts, "element"), (ties, "element"), (nodes, "node")):
        mine = df[df.member == "L1-TG-B34a"]
        assert len(mine)
        for name, u in zip(mine[what], mine.utilization):
            label = f"node {name}" if what == "node" else name
            assert f"<title>{label}: utilization {u:.3f}</title>" in truss
    assert truss.count('class="tiec"') == len(ties[ties.member == "L1-TG-B34a"])  # each tie drawn open
    assert "sectional part" in truss  # the region's boundary toward the sectionally designed span

def test_a_large_run_gets_a_compact_report_and_any_section_on_demand(tmp_path):
    """Above [report] detail_sections members, the report draws the sections of the first
    members in review order only (those needing action first, as `shearpost govern` ranks
    them), lists every member in the index, and writes any other member's section on demand."""
    config = tmp_path / "settings.toml"
    config.write_text("[report]\ndetail_sections = 2\n", encoding="utf-8")
    members = [beam("SMALL", 6.0, b_mm=250.0, h_mm=500.0), *(beam(f"B{k}", 6.0) for k in range(4))]
    forces = (rows_from_function("SMALL", "U", 6.0, lambda x: 900 * (1 - x / 3), n=3)
              + sum((rows_from_function(f"B{k}", "U", 6.0, lambda x, k=k: (60 + 25 * k) * (1 - x / 3), n=7)
                     for k in range(4)), []))
    res = design(tmp_path, members, forces, extra=["--config", str(config)])
    assert res.code == cli.EXIT_RESIZE
    run = Store(res.store).runs()[-1]
    html = (res.out / "report.html").read_text(encoding="utf-8")
    # review order: the resize first, then by utilization (B3 carries the largest shear)
    assert list(sections(html)) == ["SMALL", "B3"]
    assert "A compact report: sections for the first 2 members" in html
    assert f"shearpost report --run {run.name} --member ID" in html
    assert index_of(html).count("<tr") == len(members) + 1
    assert len(re.findall(r'<td><a href="#', index_of(html))) == 2
    one = write_html_report(run, tmp_path / "one.html", ["B0"]).read_text(encoding="utf-8")
    assert list(sections(one)) == ["B0"] and "A compact report" not in one
    full = sections(write_html_report(run, tmp_path / "b3.html", ["B3"]).read_text(encoding="utf-8"))
    assert full["B3"] == sections(html)["B3"]  # a section on demand is the one the report draws
