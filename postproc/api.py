"""The Python API: design a frame from pandas DataFrames or files, and read a store.

    import postproc
    d = postproc.design(members_df, forces_df, cases=cases_df)   # or paths to CSV / IFC
    d.members, d.zones, d.stations                                # the output tables
    s = postproc.open_store("shearpost-store")                   # runs, comparisons, schedules

The API runs the same stages as the command line (``ingest_and_design`` is the one
pipeline both use): the inputs are validated by the CSV or IFC readers, ingested as a
run into a store (a temporary one unless ``store=`` names a folder), and designed.
"""

from __future__ import annotations

import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from postproc import engine, engines, units
from postproc.adapters import csv_tables, digests, elements, ifc
from postproc.adapters.errors import InputError
from postproc.adapters.mapping import load_column_map
from postproc.joints import COLUMNS as JOINT_COLUMNS, COORDS
from postproc.settings import Settings, load_settings, settings_from_dict, validated_settings
from postproc.store import DamagedRun, Run, Store, StoreError

NOT_DESIGNED = ("no-forces", "no-geometry", "invalid", "not-covered")


class NothingDesigned(InputError):
    """A run in which no member reached the design (every one no-forces, no-geometry,
    invalid or not-covered). ``design`` holds the run and its tables, to inspect."""

    def __init__(self, message: str, design: Design):
        super().__init__(None, message)
        self.design = design


@dataclass
class Design:
    """A designed run: ``members`` and ``zones`` hold the columns of members.csv and
    zones.csv, ``joints`` those of joints.csv (joints of special moment frames, ACI 318-19
    18.8; empty without them); ``stations`` is the per-station trace (read on first use)."""

    run: Run
    members: pd.DataFrame
    zones: pd.DataFrame
    warnings: list[str] = field(default_factory=list)
    _keep: object = field(default=None, repr=False)  # a temporary store, removed with this object
    _stations: pd.DataFrame | None = field(default=None, repr=False)
    joints: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(columns=JOINT_COLUMNS))

    @property
    def name(self) -> str:
        return self.run.name

    @property
    def stations(self) -> pd.DataFrame:
        if self._stations is None:
            from postproc.govern import design_table

            self._stations = design_table(self.run, "stations")
        return self._stations

    def write(self, out_dir: str | Path) -> list[Path]:
        """members.csv and zones.csv (and joints.csv where there are joints) in ``out_dir``,
        exactly as `shearpost run` writes them."""
        from postproc import report

        return report.write_tables(self.members, self.zones, Path(out_dir), joints=self.joints)

    def report(self, path: str | Path, members: list[str] | None = None) -> Path:
        """The HTML report of this run (detail sections for ``members`` only, if given)."""
        from postproc import html_report

        return html_report.write_html_report(self.run, Path(path), members)


def design(members, forces, cases=None, config=None, *, column_map=None, store=None, run: str | None = None,
           workers: int = 1, ifc_key: str = "auto", units: str | None = None) -> Design:
    """Design every member of a frame and return the tables.

    ``members``, ``forces`` and ``cases`` are pandas DataFrames in the CSV schema of the
    README (columns in either unit system), or paths to CSV files (``members`` also to an
    IFC model). ``config`` is a settings TOML path or a dict of its sections; ``column_map``
    a mapping TOML path; ``units`` ("si" or "us", inch-pound) overrides the settings' unit
    system, in which the design is made and the tables are named.
    The run is kept in ``store`` (a folder) under ``run`` if given, else in a temporary
    store that lives as long as the returned object. Raises InputError on bad input and
    NothingDesigned when no member could be designed.
    """
    keep = None
    if store is None:
        keep = tempfile.TemporaryDirectory(prefix="shearpost-")
        store = Path(keep.name) / "store"
    store = Store(store)
    with tempfile.TemporaryDirectory(prefix="shearpost-inputs-") as tmp:
        paths = {role: _as_file(value, Path(tmp), role) for role, value in
                 (("members", members), ("forces", forces), ("cases", cases))}
        if isinstance(config, dict):
            settings, config_path = validated_settings(config, Path("config (a dict)"), units), None
        else:
            settings, config_path = load_settings(config, units), config
        stored, result = ingest_and_design(store, run, paths["members"], paths["forces"],
                                           paths["cases"], column_map, settings, config_path,
                                           engines.local(workers), ifc_key)
    out = Design(stored, result.members[engine.member_columns(result.units)],
                 result.zones[engine.zone_columns(result.units)], result.warnings, keep, joints=result.joints)
    why = nothing_designed(out.members)
    if why:
        raise NothingDesigned(why, out)
    return out


def _as_file(value, folder: Path, role: str) -> Path | None:
    """A path as given; a DataFrame written as CSV, so that it passes the same validation
    as a file (messages then name '<role>.csv' and its line numbers)."""
    if value is None or isinstance(value, (str, Path)):
        return None if value is None else Path(value)
    if isinstance(value, pd.DataFrame):
        path = folder / f"{role}.csv"
        value.to_csv(path, index=False, lineterminator="\n")
        return path
    raise TypeError(f"{role}: expected a pandas DataFrame or a path, got {type(value).__name__}")


def ingest_and_design(store: Store, name: str | None, members_path: Path, forces_path: Path, cases_path: Path | None,
                      map_path: Path | None, settings: Settings, config_path: Path | None, map_parts,
                      ifc_key: str = "auto", task=None) -> tuple[Run, engine.Result]:
    """Read and validate the inputs, ingest them as run ``name`` (None: the next free name of
    the day) and design it before the run becomes visible. The name is claimed before any
    work (two processes never write one run); every input is hashed over the bytes parsed.
    ``task(description, total)`` returns a progress callback (optional)."""
    task = task or (lambda description, total=None: None)
    with digests.session(), store.reserve(name) as name:
        return _ingest_and_design(store, name, members_path, forces_path, cases_path, map_path, settings,
                                  config_path, map_parts, ifc_key, task)


def _member_ends(members, U: units.UnitSystem) -> dict | None:
    """member -> its end coordinates (x, y, z of end i, then of end j; m or ft), for the
    members whose row gives all six: they orient the members an element export chains by
    node coordinates. None where no row does."""
    cols = U.cols(COORDS)
    if not set(cols) <= set(members.column_names):
        return None
    xyz = np.column_stack([members.column(c).to_numpy(zero_copy_only=False).astype(float) for c in cols])
    given = np.isfinite(xyz).all(axis=1)
    names = np.asarray(members.column("member").to_pylist(), object)
    return dict(zip(names[given], xyz[given])) or None


def _ingest_and_design(store, name, members_path, forces_path, cases_path, map_path, settings, config_path,
                       map_parts, ifc_key, task):
    U = units.system(settings.units)
    length = U.col("length_m")
    cmap = load_column_map(map_path, csv_tables.KNOWN_COLUMNS)
    fill = settings.input.fill
    warnings: list[str] = []
    cases = csv_tables.read_cases(cases_path, cmap, warnings) if cases_path else None
    from_ifc = Path(members_path).suffix.lower() == ".ifc"
    if from_ifc:
        probe = elements.forces_source(forces_path, cmap, fill=fill, units=U)
        u = engine.aci.edition(U.name)
        fy = u.fy_default * units.factor(U.col("fy_mpa"), "fy_mpa")  # Grade 420 | 60 where the model gives none
        members, member_warnings = read_ifc(members_path, ifc_key, settings.ifc.si(), probe.member_ids(), fy, U.name)
        members = _inch_pound_limits(units.convert_table(members, units.SI, U, digits=12), U)  # to 12 digits
        lengths = None
    else:
        members, member_warnings = csv_tables.read_members(members_path, cmap, settings.frames.by_group, fill, U)
        lengths = dict(zip(members.column("member").to_pylist(), members.column(length).to_pylist()))
        member_warnings += _units_hint(members_path, U)
    if map_path is None:  # a mapped export's headers are its own
        member_warnings += _units_hint(Path(forces_path), U, "forces")
    warnings.extend(member_warnings)
    source = elements.forces_source(forces_path, cmap, lengths, cases, cases_path, warnings,
                                    settings.stations.tolerance, fill, U, _member_ends(members, U))
    del lengths  # the reader's alone, let go with its other per-member state (forget_members)
    warnings.extend(source.spec.dialect.notes)
    inputs = {"members": members_path, "forces": forces_path, **elements.extra_inputs(source)}
    for role, path in (("cases", cases_path), ("column_map", map_path), ("settings", config_path)):
        if path:
            inputs[role] = path
    holder = {}

    def design_staged(staged: Run) -> None:
        """Design the staged run into its design/ folder before the run becomes visible."""
        from postproc import report

        warnings.extend(source.notices())  # cells filled, ids normalised (known once every row is read)
        warnings.extend(csv_tables.case_only_matches(set(members.column("member").to_pylist()),
                                                     source.member_names))
        source.forget_members()
        if from_ifc:
            to_m = units.factor(length, "length_m")
            found = {m: L * to_m for m, L in zip(members.column("member").to_pylist(),
                                                 members.column(length).to_pylist()) if L is not None}
            x = staged.forces(["member", U.col("x_m")])
            warnings.extend(ifc.length_mismatches(found, units.convert_table(x, U, units.SI),
                                                  settings.ifc.si().length_tolerance_mm))
        folder = staged.design_path
        folder.mkdir()
        advance = task("designing (parts)", len(staged.force_parts()))
        holder["result"] = result = engine.design_into(staged, settings, folder, map_parts, advance)
        result.warnings[:0] = warnings
        (folder / "manifest.json").write_text(report.dump_json(engine.design_manifest(result, settings)),
                                              encoding="utf-8")

    run = store.ingest(name, members, cases, source, inputs, warnings, {"settings": settings.as_dict()},
                       progress=task("reading forces (rows)"), then=design_staged, units=U,
                       memory_mb=settings.run.memory_mb)
    return run, holder["result"]


def _inch_pound_limits(members, U: units.UnitSystem):
    """An IFC model's members (read in SI) in an inch-pound run: those under the inch-pound
    edition's least f'c (2500 psi, Table 19.2.1.1; the SI edition's is 17 MPa) are invalid."""
    if U.name == "si" or "invalid_reason" not in members.column_names:
        return members
    import numpy as np
    import pyarrow as pa

    u = engine.aci.edition(U.name)
    fc = members.column(U.col("fc_mpa")).to_numpy(zero_copy_only=False).astype(float)
    why = np.array(members.column("invalid_reason").fill_null("").to_pylist(), dtype=object)
    low = (why == "") & (fc < u.fc_min)
    why[low] = [f"f'c {v:,.0f} {U.stress} below {u.fc_min:,g} {U.stress}, the least the inch-pound edition of ACI "
                f"318-19 admits (19.2.1.1)" for v in fc[low]]
    column = pa.array([w or None for w in why], pa.string())
    return members.set_column(members.schema.get_field_index("invalid_reason"), "invalid_reason", column)


UNIT_HINT_COLUMNS = {"members": ("length_m", "b_mm", "h_mm", "fc_mpa"), "forces": ("x_m", "V_kN", "N_kN", "T_kNm")}


def _units_hint(path: Path, U: units.UnitSystem, table: str = "members") -> list[str]:
    """A warning where a members or forces table is spelt in the other unit system than the
    run's (it is converted; the hint is for whoever meant the other edition of the code)."""
    header = csv_tables.header_names(path)
    other = units.US if U.name == "si" else units.SI
    spelt = [c for c in UNIT_HINT_COLUMNS[table] if other.col(c) in header and U.col(c) not in header]
    if len(spelt) < 2:
        return []
    return [f"{path.name} is in {other.title.split(' (')[0]} units ({', '.join(other.col(c) for c in spelt)}); "
            f"the run converts it and designs in {U.title} with {engine.aci.edition(U.name).title}"
            + (": use --units us (or units = \"us\" in the settings) for the inch-pound edition" if U.name == "si"
               else "")]


def read_ifc(path: Path, key: str, st, wanted: set[str], fy_mpa: float = 420.0, unit_system: str = "si"):
    """Members from an IFC model (SI), with the settings' defaults for what the model lacks (said
    in the run's ``unit_system``). With key 'auto', the attribute (GlobalId, Name, Tag) that
    matches most force-table members."""
    defaults = ifc.IfcDefaults(fc_mpa=st.fc_mpa, fyt_mpa=st.fyt_mpa, cover_mm=st.cover_mm, tolerance_mm=st.tolerance_mm,
                               fy_mpa=fy_mpa, units=unit_system)
    if key != "auto":
        return ifc.read_ifc_members(path, key=key, defaults=defaults)
    best, first_error = None, None
    for k in ("globalid", "name", "tag"):
        try:
            table, warnings = ifc.read_ifc_members(path, key=k, defaults=defaults)
        except InputError as exc:
            first_error = first_error or exc
            continue
        hits = len(wanted & set(table.column("member").to_pylist()))
        if best is None or hits > best[0]:
            best = (hits, k, table, warnings)
    if best is None:
        raise first_error
    hits, k, table, warnings = best
    return table, [f"IFC members matched to the forces table by {k} ({hits} of {len(wanted)} members)", *warnings]


def nothing_designed(members: pd.DataFrame, examples: int = 3) -> str | None:
    """Why a run designed no member, with what the unmatched ids look like; None when at
    least one member reached the design (designed, resize or deep-beam)."""
    status = members["status"]
    if len(members) and not status.isin(NOT_DESIGNED).all():
        return None
    counts = status.value_counts()
    said = ", ".join(f"{int(counts[s])} {s}" for s in NOT_DESIGNED if s in counts)
    lines = [f"no member was designed ({said or 'the members table is empty'})"]
    show = lambda ids: ", ".join(repr(str(m)) for m in ids[:examples]) + (" ..." if len(ids) > examples else "")
    no_forces = members.loc[status == "no-forces", "member"].tolist()
    no_geometry = members.loc[status == "no-geometry", "member"].tolist()
    if no_forces or no_geometry:
        lines.append("the member ids of the two tables do not match:")
        if no_forces:
            lines.append(f"  {len(no_forces)} member(s) of the members table have no forces, e.g. {show(no_forces)}")
        if no_geometry:
            lines.append(f"  {len(no_geometry)} member id(s) of the forces table are not in the members table, "
                         f"e.g. {show(no_geometry)}")
        lines.append("  check the id column of each (a --map file can rename it), and for IFC the --ifc-key")
    invalid = members[status == "invalid"]
    if len(invalid):
        lines.append("invalid members, e.g. " + "; ".join(f"{m}: {why}" for m, why in
                                                          zip(invalid["member"][:examples], invalid["message"])))
    if "not-covered" in counts:
        lines.append(f"{int(counts['not-covered'])} member(s) of a kind this tool does not design")
    return "\n".join(lines)


class OpenStore:
    """A store of runs, for Python: its runs, one run's tables, comparisons, schedules."""

    def __init__(self, path: str | Path):
        self.store = Store(path)
        if not self.store.root.is_dir():
            raise StoreError(f"no store at {self.store.root}")

    @property
    def path(self) -> Path:
        return self.store.root

    def runs(self) -> pd.DataFrame:
        """One row per run: name, created (UTC), members, force rows, designed."""
        rows = []
        for r in self.store.runs():
            try:
                man = r.manifest()
            except DamagedRun as exc:  # listed, with what is damaged
                rows.append({"run": r.name, "damaged": f"{exc.file}: {exc.reason}"})
                continue
            rows.append({"run": r.name, "created": man["created"], "members": man["counts"]["members"],
                         "force_rows": man["counts"]["force_rows"], "designed": r.has_design(), "damaged": None})
        return pd.DataFrame(rows, columns=["run", "created", "members", "force_rows", "designed", "damaged"])

    def _run(self, name: str | None) -> Run:
        return self.store.run(name) if name else self.store.latest()

    def run(self, name: str | None = None) -> Design:
        """A designed run's tables (the latest run by default)."""
        from postproc.govern import design_table

        r = self._run(name)
        joints = design_table(r, "joints") if (r.design_path / "joints.parquet").exists() \
            else pd.DataFrame(columns=r.units.cols(JOINT_COLUMNS))
        return Design(r, design_table(r, "members")[engine.member_columns(r.units)],
                      design_table(r, "zones").reindex(columns=engine.zone_columns(r.units)),
                      list(r.design_manifest().get("warnings", [])), joints=joints)

    def governing(self, run: str | None = None, levels=(), groups=(), statuses=(), top: int | None = None):
        """Members ranked as `shearpost govern` ranks them: those needing action first.
        A level or group no member has, or a word that is not a status, raises
        govern.UnknownFilter; a status no member has gives an empty ranking."""
        from postproc import govern

        return govern.rank(self._run(run), levels, groups, statuses, top)

    def compare(self, run_a: str, run_b: str, threshold: float = 0.02, vu_threshold: float = 0.05):
        """What changed from run_a to run_b (a govern.Comparison of DataFrames)."""
        from postproc import govern

        return govern.compare(self.store.run(run_a), self.store.run(run_b), threshold, vu_threshold)

    def schedule(self, run: str | None = None, envelope_groups: bool = False):
        """Beam marks and the bar schedule of a run (a schedule.Schedule of DataFrames)."""
        from postproc import schedule

        r = self._run(run)
        settings = settings_from_dict(r.manifest().get("settings", {}))
        return schedule.for_run(self.store, r, settings.detailing, envelope_groups)

    def explain(self, member: str, run: str | None = None):
        """One member's calculation, step by step (explain.Step: title, clause, lines)."""
        from postproc import explain

        r = self._run(run)
        return explain.explain(r, member, settings_from_dict(r.manifest().get("settings", {})))


def open_store(path: str | Path = "shearpost-store") -> OpenStore:
    """The store at ``path``, for its runs, comparisons and schedules."""
    return OpenStore(path)
