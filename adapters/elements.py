"""Element-force exports: chain the elements of meshed members into member force rows.

An analysis program that meshes each member into several elements exports one row per
element end (or per station of each element): stations measured from the element's own
end i, forces in the element's local axes with a per-end sign rule. With an
``[elements]`` section in the mapping file (``--map``) such an export is read as it is
and turned into the forces table of our schema (member, case, x_m from member node i,
V_kN, N_kN, T_kNm, M_kNm), two rows at every node between elements (left, then right).

Which elements make a member, and in what order, comes from a chaining table (member,
element, order) or from the node ids of the elements' ends and a node table (elements
on one straight line, joined end to end, grouped by the export's member column or by the
collinear rule). Syntax: README, "Element-force exports".

The export is read twice, in blocks: once for the few columns that place the elements
(element, station, nodes, member), once for the forces. Every step is vectorised over
rows and elements (pyarrow, numpy); only error paths look at single rows.

Rows leave with ``_row``, a sort key that packs the element's position in its member,
where on the element the row is (start, inside, end, in the member's direction) and the
file's data row, so that sorting by (member, case, x_m, _row) puts the left element's
end before the right element's start at a node; ``check_part`` unpacks it.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pac

from postproc import units as unit_names
from postproc.adapters.csv_tables import (BROKEN, MAX_REPORTED, PLAUSIBLE_FORCES, Col, ForcesReader, InputErrors,
                                          Problems, Tally, _check_numbers, _check_plausible, _check_text, _codes, checked_block,
                                          check_cases_cover_forces, normalise_text, prepare, read_table,
                                          record_lines, si_keyed, sort_part, stream_blocks)
from postproc.adapters.errors import InputError
from postproc.adapters.mapping import ColumnMap, TableMap, unit_factor
from postproc.units import SI, UnitSystem

QUANTITIES = ("V_kN", "N_kN", "T_kNm", "M_kNm")
# Section force = factor x export value, at the element's end i and at its end j.
# Ours (README, "Sign convention"): on the face of a section that looks back toward node i,
# V is the force along +y and T the moment about +x (x from node i to node j); N is
# positive in tension; M is sagging (tension on the -y side), so that dM/dx = V. V and T
# are thus the sums of the forces along y and the moments about x acting on the part
# between node i and the section. End forces acting ON an element at its nodes, in its
# local axes (y, z = x cross y), give by the free body of the element from end i to a
# section and from a section to end j (statics; common practice):
#     V(0) = +Fy_i  N(0) = -Fx_i  T(0) = +Mx_i  M(0) = -Mz_i
#     V(L) = -Fy_j  N(L) = +Fx_j  T(L) = -Mx_j  M(L) = +Mz_j
# Bending in the x-z plane (V along z, M about y) gives M(0) = +My_i, M(L) = -My_j.
SIGN_PRESETS = {
    "end-forces-xy": {"V_kN": (1.0, -1.0), "N_kN": (-1.0, 1.0), "T_kNm": (1.0, -1.0), "M_kNm": (-1.0, 1.0)},
    "end-forces-xz": {"V_kN": (1.0, -1.0), "N_kN": (-1.0, 1.0), "T_kNm": (1.0, -1.0), "M_kNm": (1.0, -1.0)},
    "section": {q: (1.0, 1.0) for q in QUANTITIES},
}
# Of the section forces, only V and M can change sign on an element drawn against its
# member: tension and twist read the same from either end.
MAY_FLIP = ("V_kN", "M_kNm")
KEYS = ("element", "station", "sign", "reversed_flip", "tolerance_mm", "chain", "node_i", "node_j", "node",
        "nodes", "members")
DIGITS = 9  # member stations rounded to the nanometre: the sums of element lengths carry float noise
FILE_BITS = 40  # the file's data row in the low bits of _row (up to 1.1e12 rows)
FILE_MASK = (1 << FILE_BITS) - 1
AT_START, INSIDE, AT_END = 0, 1, 2  # where a row lies on its element, in the member's direction
TRUE_WORDS, FALSE_WORDS = ("true", "yes", "1", "y"), ("false", "no", "0", "n", "")

CHAIN_COLUMNS = (Col("member", False, True), Col("element", False, True), Col("order", True, True),
                 Col("reversed", False), Col("length_m", True))
NODE_COLUMNS = (Col("node", False, True), Col("x", True, True), Col("y", True, True), Col("z", True),
                Col("member_end", False))


@dataclass(frozen=True)
class ElementSpec:
    """The parsed ``[elements]`` section of a mapping file."""

    map_path: Path
    element: str  # export column of the element id
    station: str  # export column of the station or the end flag
    station_factor: float | None  # to metres; None: the column flags the end
    end_i: str | None
    end_j: str | None
    sign_name: str
    sign: dict  # our quantity -> (factor at end i, factor at end j)
    reversed_flip: tuple | None  # None: not stated (then a reversed element is refused)
    tol_m: float
    chain: Path | None
    node_i: str | None
    node_j: str | None
    node: str | None
    nodes: Path | None
    nodes_columns: dict
    nodes_factor: float
    members: str | None  # "column" or "collinear" (no chaining table)

    @property
    def by_flag(self) -> bool:
        return self.station_factor is None

    @property
    def has_node_ids(self) -> bool:
        return bool(self.node or self.node_i)


def _bad(path, key: str, message: str) -> InputError:
    return InputError(path, f"[elements].{key}: {message}")


def parse_spec(cmap: ColumnMap) -> ElementSpec | None:
    """The ``[elements]`` section of the mapping, checked; None without one."""
    doc, path = cmap.elements, cmap.source
    if doc is None:
        return None
    unknown = sorted(set(doc) - set(KEYS))
    if unknown:
        raise InputError(path, f"[elements] has unknown keys {unknown}; known: {', '.join(KEYS)}")
    folder = Path(path).parent

    def text(key: str, required: bool = False) -> str | None:
        v = doc.get(key)
        if v is None:
            if required:
                raise _bad(path, key, "required")
            return None
        if not isinstance(v, str) or not v.strip():
            raise _bad(path, key, "must be a column name (text)")
        return v.strip()

    def file_of(key: str, allowed: tuple[str, ...]) -> tuple[Path | None, dict]:
        v = doc.get(key)
        if v is None:
            return None, {}
        if isinstance(v, str):
            v = {"file": v}
        if not isinstance(v, dict) or not isinstance(v.get("file"), str):
            raise _bad(path, key, 'give a file name, or { file = "...", ... }')
        extra = sorted(set(v) - {"file", *allowed})
        if extra:
            raise _bad(path, key, f"unknown keys {extra}")
        return folder / v["file"], v

    element = text("element", True)
    st = doc.get("station")
    if not isinstance(st, dict) or not isinstance(st.get("column"), str):
        raise _bad(path, "station", 'give { column = "...", unit = "m" } (distance from the element\'s end i) '
                                    'or { column = "...", i = "...", j = "..." } (a flag naming the end)')
    if set(st) - {"column", "unit", "i", "j"}:
        raise _bad(path, "station", f"unknown keys {sorted(set(st) - {'column', 'unit', 'i', 'j'})}")
    factor = end_i = end_j = None
    if "i" in st or "j" in st:
        if "unit" in st or "i" not in st or "j" not in st:
            raise _bad(path, "station", "an end flag needs both i and j (and no unit)")
        end_i, end_j = str(st["i"]).strip(), str(st["j"]).strip()
        if end_i == end_j:
            raise _bad(path, "station", "i and j must differ")
    else:
        try:
            factor = unit_factor("x_m", str(st.get("unit", "m")))
        except KeyError as exc:
            raise _bad(path, "station", exc.args[0]) from None

    sign = doc.get("sign")
    if isinstance(sign, str):
        if sign not in SIGN_PRESETS:
            raise _bad(path, "sign", f"'{sign}' is not one of {', '.join(SIGN_PRESETS)} (or give a table)")
        sign_name, rule = sign, SIGN_PRESETS[sign]
    elif isinstance(sign, dict):
        rule = {}
        for q, pair in sign.items():
            q = unit_names.si_name(q)  # either unit system's spelling (V_kip is V_kN)
            if q not in QUANTITIES:
                raise _bad(path, "sign", f"'{q}' is not one of {', '.join(QUANTITIES)}")
            if (not isinstance(pair, list) or len(pair) != 2
                    or any(isinstance(v, bool) or v not in (1, -1) for v in pair)):
                raise _bad(path, "sign", f"{q} must be [factor at end i, factor at end j], each 1 or -1")
            rule[q] = (float(pair[0]), float(pair[1]))
        sign_name = "table"
    else:
        raise _bad(path, "sign", f"required: one of {', '.join(SIGN_PRESETS)}, or a table "
                                 "{ V_kN = [1, -1], ... } of factors at end i and end j")

    flip = doc.get("reversed_flip")
    if flip is not None:
        if isinstance(flip, list):
            flip = [unit_names.si_name(q) if isinstance(q, str) else q for q in flip]  # V_kip is V_kN
        if not isinstance(flip, list) or any(q not in MAY_FLIP for q in flip):
            raise _bad(path, "reversed_flip", f"a list of {' and '.join(MAY_FLIP)} (N and T read the same from "
                                              "either end of an element and never change sign)")
        flip = tuple(flip)

    tol = doc.get("tolerance_mm", 1.0)
    if isinstance(tol, bool) or not isinstance(tol, (int, float)) or not 0 < tol <= 100:
        raise _bad(path, "tolerance_mm", "a length in mm, more than 0 and at most 100")

    chain, _ = file_of("chain", ())
    nodes, nspec = file_of("nodes", ("columns", "unit"))
    node_i, node_j, node = text("node_i"), text("node_j"), text("node")
    if bool(node_i) != bool(node_j):
        raise _bad(path, "node_i" if node_j else "node_j", "node_i and node_j go together")
    if node and node_i:
        raise _bad(path, "node", "give node (the node of the row's end) or node_i and node_j, not both")
    ncols = dict(nspec.get("columns", {}))
    if set(ncols) - {c.name for c in NODE_COLUMNS}:
        raise _bad(path, "nodes", f"columns: unknown {sorted(set(ncols) - {c.name for c in NODE_COLUMNS})}")
    try:
        nfactor = unit_factor("x_m", str(nspec.get("unit", "m")))
    except KeyError as exc:
        raise _bad(path, "nodes", exc.args[0]) from None
    members = doc.get("members")
    if chain is not None:
        if members is not None:
            raise _bad(path, "members", "with a chaining table the members come from it; remove this key")
    else:
        if members not in ("column", "collinear"):
            raise _bad(path, "members", 'without a chaining table, say how elements form members: "column" '
                                        "(the export's member column) or \"collinear\" (the rule)")
        if nodes is None or not (node or node_i):
            raise _bad(path, "chain", "give a chaining table, or node ids (node_i and node_j, or node) and a "
                                      "node table (nodes)")
    if nodes is not None and not (node or node_i):
        raise _bad(path, "nodes", "a node table needs the elements' node ids: give node_i and node_j, or node")

    forces = si_keyed(cmap.table("forces"))
    if "x_m" in forces.columns or "x_m" in forces.factors:
        raise InputError(path, "[forces] maps x_m, but an element export's stations are [elements].station")
    if members != "column" and "member" in forces.columns:
        raise InputError(path, "[forces].columns.member is used only with [elements].members = \"column\"")
    return ElementSpec(Path(path), element, st["column"].strip(), factor, end_i, end_j, sign_name, rule, flip,
                       float(tol) / 1e3, chain, node_i, node_j, node, nodes, ncols, nfactor, members)


def forces_source(path, cmap: ColumnMap, lengths_m: dict[str, float] | None = None, cases: pa.Table | None = None,
                  cases_path=None, warnings: list[str] | None = None, tolerance_mm: float = 1.0,
                  fill: dict | None = None, units: UnitSystem = SI, ends_m: dict[str, np.ndarray] | None = None):
    """The forces reader for ``path``: the plain forces table (rows of a station within
    ``tolerance_mm`` are one station), or, where the mapping has an ``[elements]`` section,
    the element export chained into members; either gives its rows in ``units`` (the
    member lengths ``lengths_m`` and the tolerance are in those units too: m or ft, mm or in).
    ``fill``: the settings' values for the missing cells of optional columns ([input] fill,
    in the run's units). ``ends_m``: the members' end coordinates (x, y, z of end i, then of
    end j, m or ft), which orient the members an element export chains by node coordinates."""
    spec = parse_spec(cmap)
    if spec is None:
        return ForcesReader(path, cmap, lengths_m, cases, cases_path, tolerance_mm, fill, units)
    if units.name == "si":
        return ElementForcesReader(path, cmap, spec, lengths_m, cases, cases_path, warnings, fill, ends_m)
    to_m = unit_names.factor(units.col("length_m"), "length_m")
    si_lengths = None if lengths_m is None else {m: L * to_m for m, L in lengths_m.items()}
    si_ends = None if ends_m is None else {m: np.asarray(e, float) * to_m for m, e in ends_m.items()}
    si_fill = {unit_names.si_name(k): v * unit_names.factor(k, unit_names.si_name(k)) for k, v in (fill or {}).items()}
    return InUnits(ElementForcesReader(path, cmap, spec, si_lengths, cases, cases_path, warnings, si_fill, si_ends),
                   units)


class InUnits:
    """A forces reader that works in SI (the element chaining), giving its rows in another
    unit system: each batch is converted as it leaves, each part converted back to be checked."""

    def __init__(self, source, units: UnitSystem):
        self.source, self.units = source, units

    def __getattr__(self, name):  # size(), member_ids(), rows, case_names, el, path, ...
        return getattr(self.source, name)

    def batches(self):
        for t in self.source.batches():
            yield unit_names.convert_table(t, SI, self.units)

    def check_part(self, t: pa.Table) -> None:
        self.source.check_part(unit_names.convert_table(t, self.units, SI))

    def read_all(self) -> pa.Table:
        return unit_names.convert_table(self.source.read_all(), SI, self.units)


def extra_inputs(source) -> dict[str, Path]:
    """The files besides the forces file that a forces reader read (for the run's manifest)."""
    source = source.source if isinstance(source, InUnits) else source
    if not isinstance(source, ElementForcesReader):
        return {}
    return {role: path for role, path in (("element_chain", source.el.chain), ("element_nodes", source.el.nodes))
            if path is not None}


@dataclass(frozen=True)
class Source:
    """Where the chain order came from, for errors: the file, the data row of each element
    (in chain order) and the column to name."""

    path: Path
    rows: np.ndarray
    column: str
    what: str


@dataclass(frozen=True)
class Layout:
    """Where every element lies in its member; arrays in chain order (by member, then
    position from member node i)."""

    element: pa.Array  # element ids
    member: pa.Array  # member id of each element
    position: np.ndarray  # 0 at member node i
    reversed: np.ndarray  # the element's end i is at the member's far side
    start_m: np.ndarray  # member x of the element's end nearer member node i
    end_m: np.ndarray  # ... and of the other end
    own_length_m: np.ndarray  # the element's length in its own stations
    members: object  # pandas Index of the member ids
    first: np.ndarray  # per member: index of its first element
    count: np.ndarray  # per member: number of elements

    def __post_init__(self):
        import pandas as pd  # hash indexes built once, looked up per block

        object.__setattr__(self, "_index", pd.Index(self.element.to_pylist()))

    def index_of(self, elements: pa.Array | pa.ChunkedArray) -> np.ndarray:
        """Index of each element id (-1 where unknown), through the distinct ids of the block."""
        codes, values = _codes(elements)
        return self._index.get_indexer(values)[codes] if len(values) else np.zeros(len(codes), np.int64)

    def member_index(self, names: list[str]) -> np.ndarray:
        return self.members.get_indexer(names)


class ElementForcesReader:
    """An element-force export read as the forces table of whole members (the interface of
    csv_tables.ForcesReader: ``batches()``, ``check_part()``, ``size()``, ``member_ids()``)."""

    BLOCK = ForcesReader.BLOCK

    def __init__(self, path, cmap: ColumnMap, spec: ElementSpec, lengths_m: dict[str, float] | None = None,
                 cases: pa.Table | None = None, cases_path=None, warnings: list[str] | None = None,
                 fill: dict | None = None, ends_m: dict[str, np.ndarray] | None = None):
        self.el = spec
        self.ends_m = ends_m  # member -> (x, y, z of end i, of end j) in m, where the members table gives them
        forces = si_keyed(cmap.table("forces"))
        columns = {"element": spec.element, "_station": spec.station}
        columns.update({c: forces.source_name(c) for c in ("case", *QUANTITIES)})
        cols = [Col("element", False, True), Col("case", False, True), Col("_station", not spec.by_flag, True),
                Col("V_kN", True, True), Col("N_kN", True), Col("T_kNm", True), Col("M_kNm", True)]
        if spec.members == "column":
            columns["member"] = forces.source_name("member")
            cols.append(Col("member", False, True))
        for ours in ("node_i", "node_j", "node"):
            if getattr(spec, ours):
                columns[ours] = getattr(spec, ours)
                cols.append(Col(ours, False, ours != "node"))  # a row inside an element may name no node
        factors = {q: f for q, f in forces.factors.items() if q in QUANTITIES}
        if spec.station_factor is not None:
            factors["_station"] = spec.station_factor
        self.cols = tuple(cols)
        self.table = TableMap(columns, factors)
        self.spec = prepare(path, "forces", self.cols, ColumnMap({"forces": self.table}), fill)
        self.path = self.spec.path
        self.lengths_m = lengths_m
        self.cases, self.cases_path = cases, cases_path
        self.warnings = warnings if warnings is not None else []
        self.case_names: set[str] = set()
        self.member_names: set[str] = set()
        self.rows = 0
        self.tally = Tally()
        self._layout: Layout | None = None
        self._node_break = None

    def size(self) -> int:
        return self.path.stat().st_size

    def notices(self) -> list[str]:
        """What reading changed (after ``batches``): cells filled, ids normalised; first the
        export's columns not used."""
        return [*self.spec.unread_notes(), *self.tally.notices(self.path, self.spec.fill, self.spec.table)]

    def _stream(self, only: list[str] | None = None):
        return stream_blocks(self.spec, self.BLOCK, only)  # hashed as parsed; NUL bytes, open quotes found

    def _some(self, raw: pa.Table, names: list[str]) -> pa.Table:
        """Our columns ``names`` of a block read with only those columns."""
        out = {}
        for c in (c for c in self.cols if c.name in names):
            arr = raw.column(self.table.source_name(c.name)).combine_chunks()
            if c.numeric:
                out[c.name] = pac.multiply(arr, self.table.factors.get(c.name, 1.0))
            else:  # ids compared as in the second pass (to_ours): trimmed, NFC, no zero-width characters
                out[c.name] = normalise_text(pac.utf8_trim_whitespace(arr))[0]
        return pa.table(out)

    def _fail(self, rows: np.ndarray, column: str | None, messages: list[str]) -> None:
        """Raise errors at data rows of the export (``column``: our name)."""
        probs = Problems(self.spec)
        probs.add(np.asarray(rows, np.int64)[:len(messages)], column, messages)
        probs.raise_if_any()

    # ---- pass 1: where the elements are ---------------------------------------------

    def _scan(self) -> pa.Table:
        """One row per element, in order of first appearance: its first data row
        (``_row_min``), least and largest station, and member and node ids as min and max
        over its rows (they differ where the rows disagree)."""
        el = self.el
        names = ["element", "_station"] + [c.name for c in self.cols
                                           if c.name in ("member", "node_i", "node_j", "node")]
        aggs = [("_row", "min")] + ([] if el.by_flag else [("_station", "min"), ("_station", "max")])
        aggs += [(n, f) for n in ("member", "node_i", "node_j") if n in names for f in ("min", "max")]
        sub = tuple(c for c in self.cols if c.name in names)
        per_element, per_node, rows = [], [], 0
        for raw, quoted in self._stream(names):
            t = self._some(raw, names)
            ids = np.arange(rows, rows + t.num_rows, dtype=np.int64)
            probs = Problems(self.spec, ids)
            probs.add(self.spec.broken_rows(raw, quoted), None, BROKEN)
            _check_numbers(t, self.spec, probs, sub)
            _check_text(t, self.spec, probs, sub)
            probs.raise_if_any()
            t = t.append_column("_row", pa.array(ids))
            rows += t.num_rows
            per_element.append(t.group_by("element", use_threads=False).aggregate(aggs))
            if el.node:
                named = t.filter(pac.not_equal(t.column("node"), ""))
                if el.by_flag:
                    per_node.append(named.group_by(["element", "node", "_station"], use_threads=False)
                                    .aggregate([("_row", "min")]))
                else:
                    per_node.append(named.group_by(["element", "node"], use_threads=False)
                                    .aggregate([("_row", "min"), ("_station", "min"), ("_station", "max")]))
        if rows == 0:
            raise InputError(self.path, "has a header but no data rows", 1)
        again = [(f"{n}_{f}", f) for n, f in aggs]
        facts = pa.concat_tables(per_element).group_by("element", use_threads=False).aggregate(again)
        facts = facts.rename_columns([c.replace("_min_min", "_min").replace("_max_max", "_max")
                                      for c in facts.column_names])
        facts = facts.take(pac.sort_indices(facts, [("_row_min", "ascending")]))
        if el.node:
            facts = self._nodes_from_rows(facts, pa.concat_tables(per_node))
        return facts

    def _nodes_from_rows(self, facts: pa.Table, per_node: pa.Table) -> pa.Table:
        """Node ids of each element's two ends from a column naming the node of each row: the
        node of the rows at station 0 (or flagged end i) is end i's, the other end j's."""
        el = self.el
        if el.by_flag:
            per_node = per_node.group_by(["element", "node", "_station"], use_threads=False).aggregate(
                [("_row_min", "min")])
            flag = per_node.column("_station")
            sel = {"node_i": pac.equal(flag, el.end_i), "node_j": pac.equal(flag, el.end_j)}
        else:
            per_node = per_node.group_by(["element", "node"], use_threads=False).aggregate(
                [("_row_min", "min"), ("_station_min", "min")])
            at_i = pac.less_equal(per_node.column("_station_min_min"), el.tol_m)
            sel = {"node_i": at_i, "node_j": pac.invert(at_i)}
        elem = facts.column("element")
        k = _index_in(per_node.column("element"), elem)
        seen = per_node.column("_row_min_min").to_numpy()
        node = per_node.column("node").combine_chunks()
        n = facts.num_rows
        for end, mask in sel.items():
            mask = mask.to_numpy(zero_copy_only=False)
            cnt = np.bincount(k[mask], minlength=n)
            two, none = np.flatnonzero(cnt > 1), np.flatnonzero(cnt == 0)
            if len(two):
                rows = [seen[mask & (k == e)].max() for e in two[:MAX_REPORTED]]
                self._fail(rows, "node", [f"element '{elem[e]}' names two nodes at its end {end[-1]}"
                                          for e in two[:MAX_REPORTED]])
            if len(none):
                self._fail(facts.column("_row_min").to_numpy()[none], "node",
                           [f"element '{elem[e]}' has no row naming the node at its end {end[-1]}"
                            for e in none[:MAX_REPORTED]])
            at = np.empty(n, np.int64)
            at[k[mask]] = np.flatnonzero(mask)
            ids = node.take(pa.array(at))
            facts = facts.append_column(f"{end}_min", ids).append_column(f"{end}_max", ids)
        return facts

    # ---- layout ------------------------------------------------------------------

    def layout(self) -> Layout:
        if self._layout is None:
            self._layout = self._build_layout(self._scan())
        return self._layout

    def member_ids(self) -> set[str]:
        return set(self.layout().members.tolist())

    def forget_members(self) -> None:
        """As ForcesReader.forget_members, with the element layout and node breaks checked
        against (the parts are checked by then)."""
        self.lengths_m, self.member_names, self._layout, self._node_break = None, set(), None, None
        self.ends_m = None

    def _build_layout(self, facts: pa.Table) -> Layout:
        import pandas as pd

        el = self.el
        elem = facts.column("element").combine_chunks()
        first_row = facts.column("_row_min").to_numpy()
        for name in ("member", "node_i", "node_j"):
            if f"{name}_min" in facts.column_names:
                lo, hi = facts.column(f"{name}_min"), facts.column(f"{name}_max")
                bad = np.flatnonzero(pac.not_equal(lo, hi).to_numpy(zero_copy_only=False))
                what = "in two members" if name == "member" else f"with two nodes at its end {name[-1]}"
                self._fail(first_row[bad], name, [f"element '{elem[e]}' appears {what}: '{lo[e]}' and '{hi[e]}'"
                                                  for e in bad[:MAX_REPORTED]])
        a = b = coords = None
        if el.has_node_ids:
            a, b = facts.column("node_i_min").combine_chunks(), facts.column("node_j_min").combine_chunks()
            same = np.flatnonzero(pac.equal(a, b).to_numpy(zero_copy_only=False))
            self._fail(first_row[same], "node" if el.node else "node_i",
                       [f"element '{elem[e]}' starts and ends at node '{a[e]}'" for e in same[:MAX_REPORTED]])
            if el.nodes is not None:
                coords = self._node_coords(a, b, first_row, elem)

        if el.chain is not None:
            member, order, stated, length, src = self._from_chain(elem, first_row)
        else:
            member, order, stated, length, src = self._from_nodes(elem, first_row, a, b, coords,
                                                                  facts.column("member_min").combine_chunks()
                                                                  if el.members == "column" else None)
        m_codes, m_names = _codes(member)
        n_el = len(order)
        starts = np.flatnonzero(np.r_[True, m_codes[1:] != m_codes[:-1]])
        count = np.diff(np.r_[starts, n_el])
        last = starts + count - 1
        position = np.arange(n_el) - np.repeat(starts, count)
        same_next = np.r_[m_codes[1:] == m_codes[:-1], False]
        chain_elem = elem.take(pa.array(order))

        if el.has_node_ids:
            rev = self._direction_by_nodes(a.take(pa.array(order)), b.take(pa.array(order)), same_next, chain_elem,
                                           src)
            alone = np.repeat(count == 1, count) & (stated >= 0)  # no neighbour to tell: as stated (or by geometry)
            rev[alone] = stated[alone].astype(bool)
            said = stated >= 0
            wrong = np.flatnonzero(said & (stated.astype(bool) != rev))
            if len(wrong):
                raise _errors(src.path, src.rows[wrong], "reversed",
                              [f"element '{chain_elem[k]}': reversed is {'true' if stated[k] else 'false'} but its "
                               f"nodes say it runs {'against' if rev[k] else 'with'} its member"
                               for k in wrong[:MAX_REPORTED]])
        else:
            rev = stated > 0
        own_station = facts.column("_station_max").to_numpy()[order] if not el.by_flag else None
        if coords is not None:
            self._check_straight(coords[0][order], coords[1][order], same_next, chain_elem, src)
            between = np.linalg.norm(coords[1] - coords[0], axis=1)[order]
            if length is not None:
                off = np.flatnonzero(np.abs(length - between) > el.tol_m)
                if len(off):
                    raise _errors(src.path, src.rows[off], "length_m",
                                  [f"element '{chain_elem[k]}': length_m {length[k]:g} m, but {between[k]:g} m "
                                   "between its nodes" for k in off[:MAX_REPORTED]])
            length = between
        if length is None:
            if own_station is None:
                raise InputError(el.map_path, "[elements]: the element lengths are unknown (the stations only flag "
                                              "the ends): give length_m in the chaining table, or node ids and a "
                                              "node table")
            length = own_station
        elif own_station is not None:
            off = np.flatnonzero(np.abs(own_station - length) > el.tol_m)
            self._fail(first_row[order][off], "_station",
                       [f"element '{chain_elem[k]}': its last station is {own_station[k]:g} m, its length "
                        f"{length[k]:g} m" + (" (is the row at its end j missing?)" if own_station[k] < length[k] else "")
                        for k in off[:MAX_REPORTED]])
        if own_station is not None:
            low = facts.column("_station_min").to_numpy()[order]
            off = np.flatnonzero(low < -el.tol_m)
            self._fail(first_row[order][off], "_station",
                       [f"element '{chain_elem[k]}': a station {low[k]:g} m before its end i" for k in off[:MAX_REPORTED]])
        short = np.flatnonzero(~(length > 2 * el.tol_m))
        if len(short) and length is own_station:
            self._fail(first_row[order][short], "_station",
                       [f"element '{chain_elem[k]}': its largest station is {length[k] * 1e3:g} mm: is the row at its "
                        "end j missing? (its length is taken from its stations)" for k in short[:MAX_REPORTED]])
        if len(short):
            raise _errors(src.path, src.rows[short], src.column,
                          [f"element '{chain_elem[k]}' is {length[k] * 1e3:g} mm long, not more than twice the "
                           f"tolerance ({el.tol_m * 2e3:g} mm)" for k in short[:MAX_REPORTED]])
        if rev.any() and el.reversed_flip is None:
            k = int(np.flatnonzero(rev)[0])
            raise InputError(el.map_path, f"[elements]: element '{chain_elem[k]}' runs against its member "
                                          f"'{m_names[m_codes[k]]}' (its end i is at the member's far side), and "
                                          "reversed_flip does not say which section forces change sign on such an "
                                          "element: [\"V_kN\"] where the program keeps an element's transverse axis "
                                          "(vertical for a beam) whatever the element's direction, [\"M_kNm\"] where "
                                          "that axis turns with the element (y = z x x in a plane frame)")

        # node positions along each member from the element lengths, scaled onto members.csv's length
        end_m = np.cumsum(length)
        end_m -= np.repeat(np.r_[0.0, end_m][starts], count)
        start_m = end_m - length
        total = end_m[last]
        names = [m_names[c] for c in m_codes[starts]]
        if self.lengths_m is not None:
            given = pd.Series(self.lengths_m, dtype=float).reindex(names).to_numpy()
            off = np.flatnonzero(np.abs(given - total) > el.tol_m)
            if len(off):
                raise _errors(src.path, src.rows[starts[off]], src.column,
                              [f"member '{names[k]}': its elements add up to {total[k]:.4f} m, the members table "
                               f"gives length_m {given[k]:g} m (an element missing, or one too many?)"
                               for k in off[:MAX_REPORTED]])
            exact = np.where(np.isnan(given), total, given)
            scale = np.repeat(exact / total, count)
            start_m, end_m = start_m * scale, end_m * scale
            end_m[last] = exact
        start_m, end_m = np.round(start_m, DIGITS), np.round(end_m, DIGITS)
        start_m[starts] = 0.0
        start_m[1:][same_next[:-1]] = end_m[:-1][same_next[:-1]]  # one x for both rows at a node, exactly
        if el.chain is not None:  # every element of a member against the table's order: listed from end j?
            against = np.flatnonzero(np.logical_and.reduceat(rev, starts) & (count > 1))
            if len(against):
                listed = [m_names[m_codes[starts[k]]] for k in against]
                self.warnings.append(
                    f"{len(listed)} member(s) whose elements all run against the chaining table's order "
                    f"({', '.join(listed[:5])}{' ...' if len(listed) > 5 else ''}): if the table lists them from "
                    "their end j, they are read end for end (face_i_mm, support_i and the zones at the wrong end); "
                    "list each member's elements from its end i")
        self.warnings.append(f"forces chained from {n_el} elements into {len(starts)} members of the element "
                             f"export {self.path.name} ({src.what}; sign rule '{el.sign_name}'"
                             + (f"; {int(rev.sum())} elements reversed" if rev.any() else "") + ")")
        return Layout(chain_elem, pa.array(m_names, pa.string()).take(pa.array(m_codes)), position.astype(np.int64),
                      rev, start_m, end_m, length, pd.Index(names), starts.astype(np.int64), count.astype(np.int64))

    def _from_chain(self, elem: pa.Array, first_row: np.ndarray):
        """Members, order, stated reversal (1, 0, -1 not stated) and lengths from the chaining table."""
        path = self.el.chain
        t, probs, _ = read_table(path, "chain", CHAIN_COLUMNS, ColumnMap())
        _check_text(t, probs.spec, probs)
        _check_numbers(t, probs.spec, probs, blank_ok={"length_m"})  # (given for every element or none: below)
        probs.raise_if_any()
        c_el = t.column("element").combine_chunks()
        c_member = t.column("member").combine_chunks()
        codes, _ = _codes(c_el)
        _, first = np.unique(codes, return_index=True)
        dup = np.setdiff1d(np.arange(len(codes)), first)
        if len(dup):
            first_of = np.empty(codes.max() + 1, np.int64)
            first_of[codes[first]] = first
            probs.add(dup, "element", [f"element '{c_el[r]}' is in two members: '{c_member[first_of[codes[r]]]}' and "
                                       f"'{c_member[r]}'" if c_member[first_of[codes[r]]] != c_member[r] else
                                       f"element '{c_el[r]}' is listed twice in member '{c_member[r]}'"
                                       for r in dup[:MAX_REPORTED]])
        m_codes, _ = _codes(c_member)
        order_no = t.column("order").to_numpy(zero_copy_only=False)
        by = np.lexsort((order_no, m_codes))
        same = (m_codes[by][1:] == m_codes[by][:-1]) & (order_no[by][1:] == order_no[by][:-1])
        probs.add(np.sort(by[1:][same]), "order", "two elements of one member have the same order")
        word = pac.utf8_lower(t.column("reversed").fill_null("")).to_numpy(zero_copy_only=False)
        known = np.isin(word, TRUE_WORDS + FALSE_WORDS)
        probs.add(~known, "reversed", [f"'{v}' is not true or false" for v in word[~known][:MAX_REPORTED]])
        lengths = t.column("length_m").to_numpy(zero_copy_only=False)
        given = ~np.isnan(lengths)
        if given.any():
            probs.add(~given, "length_m", "give length_m for every element or for none")
        probs.add(given & ~(lengths > 0), "length_m", "must be greater than zero")
        probs.raise_if_any()
        in_chain = _index_in(elem, c_el)
        missing = np.flatnonzero(in_chain < 0)
        self._fail(first_row[missing], "element", [f"element '{elem[e]}' is not in the chaining table {path.name}"
                                                   for e in missing[:MAX_REPORTED]])
        order = _index_in(c_el.take(pa.array(by)), elem)
        absent = np.flatnonzero(order < 0)
        if len(absent):
            probs.add(by[absent], "element", [f"element '{c_el[by[r]]}' of member '{c_member[by[r]]}' has no rows "
                                              f"in the export {self.path.name}" for r in absent[:MAX_REPORTED]])
            probs.raise_if_any()
        stated = np.where(np.isin(word, TRUE_WORDS), 1, np.where(word == "", -1, 0))[by]
        return (c_member.take(pa.array(by)), order, stated, lengths[by] if given.all() else None,
                Source(path, by, "element", f"by the chaining table {path.name}"))

    def _node_coords(self, a: pa.Array, b: pa.Array, first_row: np.ndarray, elem: pa.Array):
        """Coordinates (m) of each element's end i and end j: two (n, 3) arrays. Keeps the
        node table's member_end marks for the collinear rule."""
        cmap = ColumnMap({"nodes": TableMap(self.el.nodes_columns, {})})
        t, probs, _ = read_table(self.el.nodes, "nodes", NODE_COLUMNS, cmap)
        _check_text(t, probs.spec, probs)
        _check_numbers(t, probs.spec, probs)
        node = t.column("node").combine_chunks()
        codes, _ = _codes(node)
        _, first = np.unique(codes, return_index=True)
        probs.add(np.setdiff1d(np.arange(len(codes)), first), "node", "node listed twice")
        flag = pac.utf8_lower(t.column("member_end").fill_null("")).to_numpy(zero_copy_only=False)
        ok = np.isin(flag, TRUE_WORDS + FALSE_WORDS)
        probs.add(~ok, "member_end", [f"'{v}' is not true or false" for v in flag[~ok][:MAX_REPORTED]])
        probs.raise_if_any()
        xyz = np.column_stack([t.column(c).to_numpy(zero_copy_only=False) for c in ("x", "y", "z")])
        xyz = np.nan_to_num(xyz) * self.el.nodes_factor  # z may be left out (a plane model)
        self._node_break = (node, np.isin(flag, TRUE_WORDS))
        out = []
        for end, ids in (("node_i", a), ("node_j", b)):
            k = _index_in(ids, node)
            bad = np.flatnonzero(k < 0)
            self._fail(first_row[bad], "node" if self.el.node else end,
                       [f"node '{ids[e]}' of element '{elem[e]}' is not in the node table {self.el.nodes.name}"
                        for e in bad[:MAX_REPORTED]])
            out.append(xyz[k])
        return out

    def _from_nodes(self, elem, first_row, a, b, coords, by_member):
        """Members and order from the node table: elements on one straight line, grouped by
        the export's member column or by the collinear rule, ordered along the line; a
        member runs the way most of its elements run (a tie: from its end of least x, then
        y, then z)."""
        el = self.el
        pi, pj = coords
        n = len(elem)
        length = np.linalg.norm(pj - pi, axis=1)
        u = (pj - pi) / np.where(length > 0, length, 1.0)[:, None]
        group = _codes(by_member)[0] if by_member is not None else self._collinear_groups(a, b, pi, pj, u)
        n_groups = int(group.max()) + 1
        ref = np.full(n_groups, n)
        np.minimum.at(ref, group, np.arange(n))  # each group's first element in file order: its reference line
        p0, u0 = pi[ref][group], u[ref][group]
        s = np.einsum("ij,ij->i", (pi + pj) / 2 - p0, u0)
        lateral = np.maximum(_off_line(pi, p0, u0), _off_line(pj, p0, u0))
        off = np.flatnonzero(lateral > el.tol_m)
        self._fail(first_row[off], "element", [f"element '{elem[e]}' lies {lateral[e] * 1e3:.1f} mm off the line of "
                                               f"'{elem[ref[group[e]]]}', the first element of its member: a member "
                                               "must be straight" for e in off[:MAX_REPORTED]])
        forward = np.einsum("ij,ij->i", u, u0) > 0
        n_fwd = np.bincount(group, forward.astype(np.int64), n_groups)
        n_all = np.bincount(group, minlength=n_groups)
        flip = 2 * n_fwd < n_all
        tie = 2 * n_fwd == n_all
        lo, hi = _line_ends(pi, pj, pi[ref], u[ref], group, n_groups)
        if tie.any():
            d = np.round(hi / el.tol_m) - np.round(lo / el.tol_m)
            first_diff = d[np.arange(n_groups), np.argmax(d != 0, axis=1)]
            flip = np.where(tie, first_diff < 0, flip)
        by_ends = self._flip_by_member_ends(by_member, group, n_groups, lo, hi)
        turned = (by_ends >= 0) & (by_ends.astype(bool) != flip)  # the coordinates say the other way
        flip = np.where(by_ends >= 0, by_ends.astype(bool), flip)
        tie &= by_ends < 0
        undecided = by_ends < 0 if by_member is not None else np.zeros(n_groups, bool)
        order = np.lexsort((np.where(flip[group], -s, s), group))
        g = group[order]
        starts = np.flatnonzero(np.r_[True, g[1:] != g[:-1]])
        count = np.diff(np.r_[starts, n])
        if by_member is not None:
            member = by_member.take(pa.array(order))
            rule = "the member column"
        else:
            last = starts + count - 1
            with_member = forward[order] != flip[g]  # the element runs the member's way
            a_o, b_o = a.take(pa.array(order)), b.take(pa.array(order))
            start_node = pac.if_else(pa.array(with_member[starts]), a_o.take(pa.array(starts)),
                                     b_o.take(pa.array(starts)))
            end_node = pac.if_else(pa.array(with_member[last]), b_o.take(pa.array(last)), a_o.take(pa.array(last)))
            names = pac.binary_join_element_wise(start_node, end_node, "-")
            member = names.take(pa.array(np.repeat(np.arange(len(starts)), count)))
            rule = "the collinear rule"
        for k in np.flatnonzero(tie[g[starts]]):
            self.warnings.append(f"member '{member[starts[k]]}': as many of its elements run one way as the other; "
                                 "it is taken to start at its end of least x, then y, then z")
        for why, code in (("the members table gives no end coordinates (x_i_m ... z_j_m) for", NO_ENDS),
                          ("the members table's end coordinates match neither end of the line of", OTHER_ORIGIN)):
            names = [str(member[k]) for k in starts[undecided[g[starts]] & (by_ends[g[starts]] == code)]]
            if names:
                self.warnings.append(
                    f"{why} {len(names)} member(s) of the element export {self.path.name} ({', '.join(names[:5])}"
                    f"{' ...' if len(names) > 5 else ''}): each runs the way most of its elements run; where that is "
                    "from its end j, face_i_mm, support_i and the zones are read at the wrong end: give the members' "
                    "end coordinates, z up, and the node table's in the same axes (its columns map) to orient them")
        names = [str(member[k]) for k in starts[turned[g[starts]]]]
        if names:
            self.warnings.append(f"{len(names)} member(s) whose elements mostly run from the member's end j to its end "
                                 f"i by the members table's coordinates ({', '.join(names[:5])}"
                                 f"{' ...' if len(names) > 5 else ''}): read from end i, as the table places it")
        # a member of one element has no neighbour to give its direction: the line's, as ``flip`` took it
        alone = (n_all[group] == 1)[order]
        against = (forward == flip[group])[order]  # the element's node i at the member's end j
        return (member, order, np.where(alone, against, -1).astype(np.int64), None,
                Source(self.path, first_row[order], self.table.source_name("element"),
                       f"by the node table {el.nodes.name} and {rule}"))

    def _flip_by_member_ends(self, by_member, group, n_groups: int, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
        """Per group of elements: 1 where the members table puts the member's end i at the
        group's end ``hi`` (its line's largest projection), 0 where at ``lo``; NO_ENDS where
        the table gives no coordinates, OTHER_ORIGIN where its ends match the line's neither
        way within a twentieth of its length plus the tolerance."""
        out = np.full(n_groups, NO_ENDS)
        if by_member is None or not self.ends_m:
            return out
        codes, names = _codes(by_member)
        name_of = np.empty(n_groups, object)
        name_of[group] = np.asarray(names, object)[codes]
        ends = np.array([self.ends_m.get(str(n), np.full(6, np.nan)) for n in name_of], float).reshape(-1, 6)
        e_i, e_j = ends[:, :3], ends[:, 3:]
        near = 0.05 * np.linalg.norm(hi - lo, axis=1) + self.el.tol_m
        as_is = np.maximum(np.linalg.norm(lo - e_i, axis=1), np.linalg.norm(hi - e_j, axis=1))
        swapped = np.maximum(np.linalg.norm(hi - e_i, axis=1), np.linalg.norm(lo - e_j, axis=1))
        given = np.isfinite(ends).all(axis=1)
        out[given] = np.where(np.minimum(as_is, swapped) <= near, (swapped < as_is).astype(int), OTHER_ORIGIN)[given]
        return out

    def _collinear_groups(self, a: pa.Array, b: pa.Array, pi, pj, u) -> np.ndarray:
        """The collinear rule: two elements belong to one member where they share a node that
        no other element of the export touches and that the node table does not mark as a
        member end, and the second continues the line of the first."""
        from scipy.sparse import coo_matrix
        from scipy.sparse.csgraph import connected_components

        n = len(a)
        codes, values = _codes(pa.concat_arrays([a, b]))
        ca = codes[:n]
        degree = np.bincount(codes, minlength=len(values))
        node_tab, marked = self._node_break
        marked_here = marked[_index_in(pa.array(values, pa.string()), node_tab)]
        joint = np.flatnonzero((degree[codes] == 2) & ~marked_here[codes])
        joint = joint[np.argsort(codes[joint], kind="stable")]
        pairs = (joint % n).reshape(-1, 2)  # the two elements at each such node
        e1, e2 = pairs[:, 0], pairs[:, 1]
        shared = codes[joint[::2]]
        far = np.where((ca[e2] == shared)[:, None], pj[e2], pi[e2])
        straight = _off_line(far, pi[e1], u[e1]) <= self.el.tol_m
        graph = coo_matrix((np.ones(int(straight.sum())), (e1[straight], e2[straight])), shape=(n, n))
        return connected_components(graph, directed=False)[1].astype(np.int64)

    def _direction_by_nodes(self, a: pa.Array, b: pa.Array, same_next: np.ndarray, elem: pa.Array,
                            src: Source) -> np.ndarray:
        """Which elements run against their member, from the node each shares with the next
        one (arrays in chain order); a chain whose neighbours share no node is refused."""
        n = len(a)
        codes, _ = _codes(pa.concat_arrays([a, b]))
        ca, cb = codes[:n], codes[n:]
        k = np.flatnonzero(same_next)
        share = np.stack([cb[k] == ca[k + 1], cb[k] == cb[k + 1], ca[k] == ca[k + 1], ca[k] == cb[k + 1]])
        n_shared = share.sum(axis=0)
        bad = np.flatnonzero(n_shared != 1)
        if len(bad):
            msgs = []
            for j in bad[:MAX_REPORTED]:
                e0, e1 = k[j], k[j] + 1
                msgs.append(f"broken chain: element '{elem[e0]}' (nodes '{a[e0]}', '{b[e0]}') and the next element "
                            f"'{elem[e1]}' (nodes '{a[e1]}', '{b[e1]}') share no node" if n_shared[j] == 0 else
                            f"elements '{elem[e0]}' and '{elem[e1]}' join the same two nodes")
            raise _errors(src.path, src.rows[k[bad] + 1], src.column, msgs)
        rev = np.zeros(n, bool)
        rev[k] = ~(share[0] | share[1])  # element k runs the member's way where its end j is the shared node
        from_left = ~(share[0] | share[2])  # ... element k+1 where its end i is
        clash = np.flatnonzero(same_next[k + 1] & (rev[k + 1] != from_left))  # seen from both sides
        if len(clash):
            j = k[clash] + 1
            raise _errors(src.path, src.rows[j], src.column,
                          [f"broken chain: element '{elem[e]}' meets both its neighbours at one node"
                           for e in j[:MAX_REPORTED]])
        tail = ~same_next[k + 1]  # element k+1 is its member's last
        rev[k[tail] + 1] = from_left[tail]
        return rev

    def _check_straight(self, pi, pj, same_next, elem, src: Source) -> None:
        """Neighbouring elements of a member on one line (both ends of the next element within
        the tolerance of the line of the one before); arrays in chain order."""
        k = np.flatnonzero(same_next)
        if not len(k):
            return
        u = (pj[k] - pi[k]) / np.linalg.norm(pj[k] - pi[k], axis=1)[:, None]
        off = np.maximum(_off_line(pi[k + 1], pi[k], u), _off_line(pj[k + 1], pi[k], u))
        bad = np.flatnonzero(off > self.el.tol_m)
        if len(bad):
            raise _errors(src.path, src.rows[k[bad] + 1], src.column,
                          [f"element '{elem[k[j] + 1]}' lies {off[j] * 1e3:.1f} mm off the line of '{elem[k[j]]}' "
                           "before it: a member must be straight" for j in bad[:MAX_REPORTED]])

    # ---- pass 2: the forces ----------------------------------------------------------

    def batches(self):
        lay = self.layout()
        el = self.el
        self.rows, self.case_names = 0, set()
        for raw, quoted in self._stream():
            t, probs, ids = checked_block(self.spec, raw, quoted, self.rows, self.tally)
            _check_plausible(t, probs, {q: PLAUSIBLE_FORCES[q] for q in QUANTITIES})
            probs.raise_if_any()
            k = lay.index_of(t.column("element"))  # every element is in the layout (pass 1)
            le = lay.own_length_m[k]
            if el.by_flag:
                flag = t.column("_station")
                is_i = pac.equal(flag, el.end_i).to_numpy(zero_copy_only=False)
                is_j = pac.equal(flag, el.end_j).to_numpy(zero_copy_only=False)
                neither = ~(is_i | is_j)
                probs.add(neither, "_station", [f"'{v}' is neither '{el.end_i}' (end i) nor '{el.end_j}' (end j)"
                                                for v in flag.filter(pa.array(neither)).to_pylist()[:MAX_REPORTED]])
                xl = np.where(is_j, le, 0.0)
            else:
                xl = t.column("_station").to_numpy()  # within the element (layout)
                is_i, is_j = xl <= el.tol_m, xl >= le - el.tol_m
                if el.sign_name != "section":
                    probs.add(~(is_i | is_j), "_station",
                              f"a row inside the element, where the per-end sign rule '{el.sign_name}' says nothing: "
                              "export element ends only, or section forces (sign = \"section\")")
            probs.raise_if_any()
            rev = lay.reversed[k]
            at_start, at_end = np.where(rev, is_j, is_i), np.where(rev, is_i, is_j)
            x0, x1 = lay.start_m[k], lay.end_m[k]
            along = np.clip(xl, 0.0, le) * (x1 - x0) / le
            x = np.where(at_start, x0, np.where(at_end, x1, np.round(np.where(rev, x1 - along, x0 + along), DIGITS)))
            where = np.where(at_start, AT_START, np.where(at_end, AT_END, INSIDE)).astype(np.int64)
            out = {"member": lay.member.take(pa.array(k)), "case": t.column("case").combine_chunks(),
                   "x_m": pa.array(x)}
            for q in QUANTITIES:
                si, sj = el.sign.get(q, (1.0, 1.0))
                f = np.where(is_i, si, np.where(is_j, sj, 1.0))
                if el.reversed_flip and q in el.reversed_flip:
                    f = np.where(rev, -f, f)
                v = t.column(q).to_numpy(zero_copy_only=False).astype(float) * f
                # absent N, T, M: zero (a column the export has holds no missing cell: checked above)
                out[q] = pa.array((v if q == "V_kN" else np.nan_to_num(v, nan=0.0)) + 0.0)
            out["Vb_kN"] = pa.array(np.zeros(t.num_rows))  # an element export gives no shear along b (as absent)
            out["_row"] = pa.array(((lay.position[k] * 4 + where) << FILE_BITS) | ids)
            self.rows += t.num_rows
            self.case_names.update(pac.unique(t.column("case")).to_pylist())
            self.member_names.update(pac.unique(out["member"]).to_pylist())
            yield pa.table(out)
        if self.cases is not None:
            check_cases_cover_forces(self.cases, self.case_names, self.cases_path)

    def check_part(self, t: pa.Table) -> None:
        """Checks of a member-complete part sorted by member, case, x_m and _row: one row at
        each end of every element in every case of its member, at most two rows at a
        station; a warning where V, N, T or M turn sign exactly across a node."""
        lay = self.layout()
        key = t.column("_row").to_numpy()
        rows, slot = key & FILE_MASK, key >> FILE_BITS
        pos, where = slot >> 2, slot & 3
        m, m_names = _codes(t.column("member"))
        c, c_names = _codes(t.column("case"))
        x = t.column("x_m").to_numpy()
        probs = Problems(self.spec, rows)
        mi = lay.member_index(m_names)
        first, count = lay.first[mi], lay.count[mi]

        e_rows = np.flatnonzero(where != INSIDE)
        e_rows = e_rows[np.lexsort((where[e_rows], pos[e_rows], c[e_rows], m[e_rows]))]
        em, ec, ep, ew = m[e_rows], c[e_rows], pos[e_rows], where[e_rows]
        group_start = np.r_[True, (em[1:] != em[:-1]) | (ec[1:] != ec[:-1])]
        dup = ~group_start[1:] & (ep[1:] == ep[:-1]) & (ew[1:] == ew[:-1])
        twice = e_rows[1:][dup]
        probs.add(np.sort(twice), "element", [f"element '{lay.element[int(first[m[r]] + pos[r])]}', case "
                                              f"'{c_names[c[r]]}': a second row at this end of the element"
                                              for r in np.sort(twice)[:MAX_REPORTED]])
        starts = np.flatnonzero(group_start)
        distinct = np.add.reduceat(np.r_[True, ~dup].astype(np.int64), starts) if len(starts) else starts
        short = np.flatnonzero(distinct < 2 * count[em[starts]]) if len(starts) else starts
        msgs, at = [], []
        for g in short[:MAX_REPORTED]:  # an error path: one message per incomplete member and case
            rs = e_rows[starts[g]:(starts[g + 1] if g + 1 < len(starts) else len(e_rows))]
            have = set(zip(pos[rs].tolist(), where[rs].tolist()))
            r0 = rs[0]
            gaps = [(p, w) for p in range(int(count[m[r0]])) for w in (AT_START, AT_END) if (p, w) not in have]
            p, w = gaps[0]
            e = int(first[m[r0]] + p)
            own = "i" if (w == AT_START) != bool(lay.reversed[e]) else "j"
            msgs.append(f"member '{m_names[m[r0]]}', case '{c_names[c[r0]]}': element '{lay.element[e]}' has no row "
                        f"at its end {own}" + (f" (and {len(gaps) - 1} more element ends)" if len(gaps) > 1 else ""))
            at.append(r0)
        probs.add(np.array(at, np.int64), "element", msgs)
        same = (m[1:] == m[:-1]) & (c[1:] == c[:-1]) & (x[1:] == x[:-1])
        third = np.zeros(len(x), bool)
        third[2:] = same[1:] & same[:-1]
        probs.add(third, "_station", "a third row at one station of the member")
        probs.raise_if_any()
        self._warn_sign_turns(t, m, m_names, c, where, same)

    def _warn_sign_turns(self, t: pa.Table, m, m_names, c, where, same) -> None:
        """A wrong sign rule shows at the nodes between elements: V, N and T (continuous, or
        constant, between loads) turn sign exactly at every such node of a member, M
        (continuous, but for a concentrated couple) at the nodes next to a wrongly flipped
        element. Warned where M turns sign exactly at any node, or V, N or T at every one of
        two or more nodes of a member in a case: a concentrated torque at the middle of a
        symmetric beam turns T exactly at its one node, and is no sign of a wrong rule."""
        node = np.flatnonzero(same & (where[:-1] == AT_END) & (where[1:] == AT_START))
        if not len(node):
            return
        group = m[node] * (c.max() + 1) + c[node]
        for q in ("V_kN", "N_kN", "T_kNm", "M_kNm"):
            v = t.column(q).to_numpy()
            scale = np.zeros(len(m_names))
            np.maximum.at(scale, m, np.abs(v))
            left, right = v[node], v[node + 1]
            big = np.abs(left) > 1e-6 * scale[m[node]]
            turned = big & (np.abs(left + right) <= 1e-6 * np.abs(left))
            if q != "M_kNm":
                n_big = np.bincount(group, big, group.max() + 1)
                n_turned = np.bincount(group, turned, group.max() + 1)
                every = (n_big >= 2) & (n_turned == n_big)
                turned &= every[group]
            if turned.any():
                names = sorted({m_names[j] for j in np.unique(m[node[turned]])})
                self.warnings.append(
                    f"{q} turns sign exactly across a node between elements ({int(turned.sum())} times over nodes "
                    f"and cases; members {', '.join(names[:5])}{' ...' if len(names) > 5 else ''}): check [elements] sign "
                    f"('{self.el.sign_name}') and reversed_flip")

    def read_all(self) -> pa.Table:
        """The whole export as one chained table (for small files and tests)."""
        t = sort_part(pa.concat_tables(list(self.batches())))
        self.check_part(t)
        return t.drop_columns(["_row"])


def _index_in(values: pa.Array | pa.ChunkedArray, table: pa.Array | pa.ChunkedArray) -> np.ndarray:
    """Index of each value in ``table`` (-1 where absent)."""
    if isinstance(table, pa.ChunkedArray):
        table = table.combine_chunks()
    return pac.index_in(values, value_set=table).fill_null(-1).to_numpy(zero_copy_only=False).astype(np.int64)


NO_ENDS, OTHER_ORIGIN = -1, -2  # _flip_by_member_ends: the members table cannot orient the member


def _off_line(p: np.ndarray, p0: np.ndarray, u: np.ndarray) -> np.ndarray:
    """Distance of points p from the lines through p0 along unit vectors u."""
    d = p - p0
    return np.linalg.norm(d - np.einsum("ij,ij->i", d, u)[:, None] * u, axis=1)


def _line_ends(pi, pj, p0, u0, group, n_groups):
    """The two end points of each group's line: least and largest projection on u0."""
    pts = np.concatenate([pi, pj])
    g = np.r_[group, group]
    s = np.einsum("ij,ij->i", pts - p0[g], u0[g])
    order = np.lexsort((s, g))
    gs = g[order]
    first = np.flatnonzero(np.r_[True, gs[1:] != gs[:-1]])
    last = np.r_[first[1:], len(gs)] - 1
    lo, hi = np.zeros((n_groups, 3)), np.zeros((n_groups, 3))
    lo[gs[first]], hi[gs[last]] = pts[order[first]], pts[order[last]]
    return lo, hi


def _errors(path: Path, data_rows, column: str | None, messages: list[str]) -> InputErrors:
    """Errors at data rows of a file, each with its line."""
    rows = np.asarray(data_rows, np.int64)[:len(messages)]
    lines = record_lines(Path(path), int(rows.max())) if len(rows) else []
    return InputErrors([InputError(path, msg, lines[r] if r < len(lines) else None, column)
                        for r, msg in zip(rows.tolist(), messages)])
