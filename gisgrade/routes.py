"""Many routes at once: the whole job per route, on Dask, compared in one table.

The centerline layer holds several routes: ``[alignment] route_field``
groups its features into routes by that attribute; with no field named,
each feature is a route. Every route runs the same stages as ``gisgrade
run`` (:func:`gisgrade.pipeline.compute` with the route's features in place
of the ``[alignment]`` file), one task per route on a Dask cluster: a
``LocalCluster`` on this machine by default or an existing scheduler by
address. A worker reads only the DEM windows its route needs (the terrain
stage reads by window); no raster is shipped. A route that fails becomes a
row whose ``status`` is its one-line reason; the others go on.

Everything is written once, into one folder swapped in whole at the end
(:func:`gisgrade.output.atomic.atomic_folder`). A worker that sees that
folder writes its route's own outputs there and leaves the route's layers
as Arrow files beside them, which one worker merges into ``routes.gpkg`` at
the end while this process draws the figure; elsewhere they come back to
this process (files as bytes, layers as Arrow tables), which writes them.
"""
from __future__ import annotations

import logging
import os
import re
import tempfile
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import InputError, first_line, some_of

__all__ = ["read_routes", "run_routes", "route_rows", "RoutesResult", "COLUMNS"]

log = logging.getLogger("gisgrade")

#: The columns of ``routes.csv``, one row per route and scenario.
COLUMNS = ("route", "folder", "scenario", "status", "length_m", "trench_volume_m3", "bends", "air_valves",
           "crossings", "min_pressure_kpa", "max_pressure_kpa", "pump_head_m",
           "annual_energy_kwh", "findings", "below_vapour")

#: Points kept per route for the comparison figure (a 20 km line at 0.5 m has 40 000).
PLOT_POINTS = 1500

#: The folder, inside the one being built, where workers leave each route's
#: layers as Arrow files until ``routes.gpkg`` is written (removed before the end).
PARTS = ".layers"


# --------------------------------------------------------------------------
# The routes of a layer
# --------------------------------------------------------------------------


def folder_name(name: str) -> str:
    """A route's name as a folder name: letters (any script), digits, ``-``,
    ``_`` and ``.``; every other run of characters one ``_``.

    >>> folder_name("Route B / north"), folder_name("Zürich – Ost ✓"), folder_name("..")
    ('Route_B_north', 'Zürich_Ost', 'route')
    """
    safe = re.sub(r"[^\w.-]+", "_", str(name)).strip("._")
    return safe or "route"


def group_routes(gdf, field_name: str | None, key: str, file: str) -> list[tuple[str, object]]:
    """``[(name, features)]``: the features of ``gdf`` grouped by ``field_name``
    (in order of first appearance), or each feature a route (named by its
    position, ``feature-1`` ...). Errors name the key and the file."""
    kinds = sorted(set(gdf.geom_type) - {"LineString", "MultiLineString"})
    if kinds:
        raise InputError(f"{key}: {file} holds {kinds[0]} features; routes must be lines")
    if len(gdf) == 0:
        raise InputError(f"{key}: {file} holds no line feature")
    if field_name is None:
        return [(f"feature-{i + 1}", gdf.iloc[[i]]) for i in range(len(gdf))]
    if field_name not in gdf.columns:
        fields = ", ".join(c for c in gdf.columns if c != "geometry") or "none"
        raise InputError(f"alignment.route_field: {file} has no field {field_name!r} "
                         f"(its fields: {fields})")
    values = gdf[field_name]
    missing = np.flatnonzero(values.isna().to_numpy())
    if len(missing):
        raise InputError(f"alignment.route_field: feature {missing[0] + 1} of {file} has no "
                         f"{field_name!r}: every feature needs a route name")
    names = values.astype(str).to_numpy()
    order = list(dict.fromkeys(names))
    out = []
    for n in order:
        part = gdf[names == n].copy()
        part.attrs.update(route=n, field=field_name)  # for the alignment's messages
        out.append((n, part))
    return out


def read_routes(project) -> list[tuple[str, object]]:
    """The routes of the project's centerline layer (see :func:`group_routes`);
    ``[alignment] where`` and ``feature`` still filter the features first."""
    from .alignment import read_chosen

    cfg = project.alignment
    gdf = read_chosen(cfg.path, "alignment.path", layer=cfg.layer, where=cfg.where,
                      feature=cfg.feature)
    routes = group_routes(gdf, cfg.route_field, "alignment.path", cfg.path.name)
    if cfg.route_field is not None and (cfg.where is not None or cfg.feature is not None):
        _say_parts_left_out(cfg, routes)
    return routes


def _say_parts_left_out(cfg, routes) -> None:
    """Warn of each route of which ``where`` / ``feature`` left out some
    features (a route drawn in several parts, one part picked): the run then
    sets out only those parts, under the route's name."""
    import pyogrio

    try:
        names = pyogrio.read_dataframe(cfg.path, layer=cfg.layer, columns=[cfg.route_field],
                                       read_geometry=False)[cfg.route_field]
    except Exception:  # (the layer was read a moment ago; nothing more to say then)
        return
    whole = names.dropna().astype(str).value_counts()
    for name, features in routes:
        if whole.get(name, 0) > len(features):
            chosen = "where" if cfg.where is not None else "feature"
            log.warning("alignment.%s leaves %d of the %d features of route %r: only %s set "
                        "out", chosen, len(features), whole[name], name,
                        "that feature is" if len(features) == 1 else "those features are")


def the_one_route(project):
    """The features of the one route that ``[alignment] route_field`` (after
    ``where`` / ``feature``) leaves in the centerline layer, for a command
    that sets out one route; several are an input error
    (:func:`several_routes`)."""
    routes = read_routes(project)
    if len(routes) > 1:
        raise InputError(several_routes(routes, project.alignment))
    return routes[0][1]


def several_routes(routes, cfg) -> str:
    """The one-line refusal of a single-route command (``run``, ``profile``)
    given a layer of several routes by ``[alignment] route_field``: how many,
    which, and the ``where`` that picks the first, ready to paste (an SQL
    filter in a TOML string), or ``gisgrade routes`` to run them all.

    >>> from types import SimpleNamespace as NS
    >>> cfg = NS(route_field="name", path=NS(name="mains.gpkg"))
    >>> print(several_routes([("east", None), ("west", None)], cfg))  # doctest: +NORMALIZE_WHITESPACE
    alignment.route_field: mains.gpkg holds 2 routes by 'name' (east, west); a run sets out
    one: pick it with [alignment] where = "name = 'east'", or run every route with
    `gisgrade routes`
    """
    names = [n for n, _ in routes]
    shown = some_of([n if n.isprintable() else n.encode("unicode_escape").decode()
                     for n in names], 4)
    frame, field_name = routes[0][1], cfg.route_field
    kind = frame[field_name].dtype if frame is not None and field_name in frame else None
    alike = [n for n in names if n.casefold() == names[0].casefold()]
    if len(alike) > 1 and Path(cfg.path.name).suffix.lower() != ".gpkg":
        # GDAL's filter on GeoJSON and other files compares text regardless of case
        pick = (f"by a name that differs from the others by more than case "
                f"({', '.join(map(repr, alike[:3]))} are one to a filter on "
                f"{Path(cfg.path.name).suffix or 'this file'}): rename them")
    else:
        pick = f"with [alignment] {pick_route(field_name, names[0], kind)}"
    return (f"alignment.route_field: {cfg.path.name} holds {len(names)} routes by "
            f"{field_name!r} ({shown}); a run sets out one: pick it {pick}, or run every "
            "route with `gisgrade routes`")


def pick_route(field_name: str, value: str, kind=None) -> str:
    r"""``where = "..."``: the TOML line whose SQL filter picks the features
    whose ``field_name`` is ``value`` (a text value quoted, its ``'``
    doubled, as SQL writes them; a field name that is not a plain word in
    double quotes; a number bare and a true/false field as 1/0, as OGR's SQL
    holds them), escaped for a TOML basic string.

    >>> print(pick_route("route id", "O'Dell \\ 2"))
    where = "\"route id\" = 'O''Dell \\ 2'"
    >>> import numpy as np
    >>> pick_route("zone", "7", np.dtype("int64")), pick_route("ok", "True", np.dtype(bool))
    ('where = "zone = 7"', 'where = "ok = 1"')
    """
    from pandas.api.types import is_bool_dtype, is_numeric_dtype

    column = field_name if re.fullmatch(r"[A-Za-z_]\w*", field_name) else \
        '"' + field_name.replace('"', '""') + '"'
    if kind is not None and is_bool_dtype(kind):
        literal = "1" if value == "True" else "0"
    elif kind is not None and is_numeric_dtype(kind):
        literal = value
    else:
        literal = "'" + value.replace("'", "''") + "'"
    sql = f"{column} = {literal}"
    escaped = (sql.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
               .replace("\t", "\\t").replace("\r", "\\r"))
    return f'where = "{escaped}"'


#: What ``routes`` writes beside the route folders (and SQLite's files beside
#: the GeoPackage while it is written), lower case: never a route's folder.
RESERVED = frozenset({"routes.csv", "routes.gpkg", "routes.png", "routes.parquet", "parquet",
                      "manifest.json", "routes.gpkg-journal", "routes.gpkg-wal",
                      "routes.gpkg-shm"})


def _unique_folders(names) -> list[str]:
    """A folder per route, apart even on a case-blind file system: a name that
    is already a folder name keeps it; the others get theirs made safe, with
    ``-2``, ``-3`` ... where it is taken (``routes.csv`` has each route's folder),
    as are the names of what ``routes`` writes beside them (:data:`RESERVED`).

    >>> _unique_folders(["Route/B", "Route_B", "a", "A"])
    ['Route_B-2', 'Route_B', 'a', 'A-2']
    >>> _unique_folders(["Routes.CSV", "manifest.json"])
    ['Routes.CSV-2', 'manifest.json-2']
    """
    taken, out = set(RESERVED), [None] * len(names)
    for i, n in enumerate(names):  # exact names first, in order
        if folder_name(n) == str(n) and str(n).lower() not in taken:
            out[i] = str(n)
            taken.add(str(n).lower())
    for i, n in enumerate(names):
        if out[i] is None:
            base, k = folder_name(n), 1
            while (f"{base}-{k}" if k > 1 else base).lower() in taken:
                k += 1
            out[i] = f"{base}-{k}" if k > 1 else base
            taken.add(out[i].lower())
    return out


# --------------------------------------------------------------------------
# One route (runs on a worker)
# --------------------------------------------------------------------------


@dataclass
class Outcome:
    """What one route's task sends back: plain data, picklable."""

    name: str
    rows: list  #: routes.csv rows (dicts)
    error: str | None = None
    layers: dict = field(default_factory=dict)  #: layer name -> :class:`LayerPart`
    files: dict = field(default_factory=dict)  #: relative path -> bytes, or None once written
    plan: object = None  #: (n, 2) array of the route in the output CRS
    profile: dict | None = None  #: station, ground, hgl arrays (thinned) for the figure
    seconds: float = 0.0


@dataclass
class LayerPart:
    """One route's features of one layer, as the Arrow table the GeoPackage
    writer takes (:func:`~gisgrade.output.layers.arrow_layer`): in memory
    (``table``) or in an Arrow IPC file the worker wrote into the folder
    being built (``path``)."""

    kinds: tuple  #: the geometry types present (e.g. ``("LineString",)``)
    crs: object  #: pyproj CRS of the geometries
    table: object = None  #: pyarrow Table, or None when it is at ``path``
    path: str | None = None
    rows: int = 0  #: features (set from ``table``)

    def __post_init__(self):
        if self.table is not None:
            self.rows = self.table.num_rows

    def read(self):
        """The table (memory-mapped from ``path``: no copy)."""
        import pyarrow as pa

        if self.table is not None:
            return self.table
        with pa.memory_map(self.path) as source:
            return pa.ipc.open_file(source).read_all()


def route_rows(name: str, result) -> list[dict]:
    """The ``routes.csv`` rows of one route's :class:`~gisgrade.result.Result`:
    one per scenario (the static case included), figures in SI."""
    s = result.summary
    common = dict(route=name, status="ok", length_m=s.get("length_m"),
                  trench_volume_m3=s.get("trench_volume_m3"), bends=s.get("bends"),
                  air_valves=sum(v for k, v in s.get("valves", {}).items() if k != "drain")
                  if "valves" in s else None,
                  crossings=len(s.get("crossings", [])))
    findings = result.findings
    energy = {}
    if result.energy is not None and result.grades is not None:
        per = result.energy.per_scenario(result.grades.names)
        energy = {r.scenario: r for r in per.itertuples()}
    rows = []
    for sc in s.get("scenarios", []):
        name_sc = sc["scenario"]
        e = energy.get(name_sc)
        count = (int((findings["scenario"] == name_sc).sum()) if findings is not None
                 and len(findings) else 0)
        rows.append(dict(common, scenario=name_sc, min_pressure_kpa=sc["pressure_min_kpa"],
                         max_pressure_kpa=sc["pressure_max_kpa"],
                         pump_head_m=sc.get("pump_head_m", 0.0 if e is None else e.pump_head_m),
                         annual_energy_kwh=None if e is None else e.energy_j / 3.6e6,
                         findings=count, below_vapour=not sc.get("achievable", True)))
    return rows or [dict(common, scenario="")]


def route_line(rows, display) -> str:
    """A route's rows of ``routes.csv`` (status ok) in a few words: its length,
    its lowest pressure over every scenario and where (in words where the
    column separates, below vapour pressure), the most findings of one scenario."""
    worst = rows.loc[rows["min_pressure_kpa"].astype(float).idxmin()]
    low = ("below vapour pressure (the column separates)" if bool(worst["below_vapour"])
           else f"lowest pressure {display.text(float(worst['min_pressure_kpa']) * 1e3, 'pressure')}")
    most = int(rows["findings"].max())
    return (f"{display.text(float(rows['length_m'].iloc[0]), 'length', 0)}, {low} in "
            f"{worst['scenario']}, {most} finding{'' if most == 1 else 's'} in the worst scenario")


def _thin(n: int, keep: int = PLOT_POINTS) -> np.ndarray:
    return np.unique(np.linspace(0, n - 1, min(n, keep)).round().astype(int))


def _figure_data(result):
    """The route in the output CRS and its thinned profile, for the comparison figure."""
    import pyproj

    from .output.layers import output_crs

    t = result.table
    k = _thin(len(t))
    fwd = pyproj.Transformer.from_crs(result.alignment.crs, output_crs(result), always_xy=True)
    plan = np.column_stack(fwd.transform(t["x"].to_numpy()[k], t["y"].to_numpy()[k]))
    prof = {"station": t["station_m"].to_numpy()[k], "ground": t["ground_m"].to_numpy()[k]}
    g = result.grades
    if g is not None:
        prof["hgl"] = g.hgl[0][k]
        prof["scenario"] = g.names[0]
        if "top_m" in t:
            prof["pipe"] = t["top_m"].to_numpy()[k]
    return plan, prof


def _read_tree(folder: Path) -> dict:
    return {str(p.relative_to(folder)): p.read_bytes()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def merge_parts(parts: list) -> tuple:
    """``(table, crs, kinds)``: the :class:`LayerPart` of every route of one
    layer as one table in the first part's CRS, in the routes' order, and
    the geometry types present: what one frame of every route
    (``pandas.concat``) holds. A field's types across routes are widened as
    ``concat`` would (a field without values takes the others' type,
    integers and floats become floats); types that do not widen become
    text, as pyogrio writes a column of mixed values
    (:func:`~gisgrade.output.layers.for_gdal` then makes the table what
    pyogrio hands GDAL)."""
    import pyarrow as pa

    crs = parts[0].crs
    tables = [_in_crs(p.read(), p.crs, crs) for p in parts]
    try:
        table = pa.concat_tables(tables, promote_options="permissive")
    except (pa.ArrowInvalid, pa.ArrowTypeError, pa.ArrowNotImplementedError):
        names = list(dict.fromkeys(n for t in tables for n in t.schema.names))
        target = {n: _widened([t.schema.field(n).type for t in tables if n in t.schema.names])
                  for n in names}
        tables = [t.cast(pa.schema([pa.field(n, target[n]) for n in t.schema.names]))
                  for t in tables]
        table = pa.concat_tables(tables, promote_options="permissive")
    return table, crs, {k for p in parts for k in p.kinds}


def _widened(types: list):
    """The one Arrow type of a field that has ``types`` in the routes' parts:
    widened as ``pandas.concat`` would (integers and floats as floats, no
    value as any type), else text.

    >>> import pyarrow as pa
    >>> _widened([pa.int64(), pa.null(), pa.float64()]), _widened([pa.float64(), pa.string()])
    (DataType(double), DataType(string))
    """
    import pyarrow as pa

    try:
        return pa.unify_schemas([pa.schema([pa.field("f", t)]) for t in types],
                                promote_options="permissive").field("f").type
    except (pa.ArrowInvalid, pa.ArrowTypeError, pa.ArrowNotImplementedError):
        return pa.string()


def _in_crs(table, crs, target):
    """``table``'s geometries reprojected from ``crs`` to ``target`` (the same table when equal)."""
    if crs == target:
        return table
    import geopandas as gpd
    import pyarrow as pa

    g = gpd.GeoSeries.from_wkb(table.column("geometry").to_numpy(zero_copy_only=False), crs=crs)
    i = table.schema.get_field_index("geometry")
    return table.set_column(i, "geometry", pa.array(g.to_crs(target).to_wkb(), pa.binary()))


def _write_parts(layers: dict, folder: Path) -> dict:
    """Each layer's part as an Arrow IPC file in ``folder``; the parts now name their files."""
    import pyarrow as pa

    folder.mkdir(parents=True, exist_ok=True)
    for name, part in layers.items():
        path = folder / f"{name}.arrow"
        with pa.OSFile(str(path), "wb") as sink, pa.ipc.new_file(sink, part.table.schema) as w:
            w.write_table(part.table)
        part.table, part.path = None, str(path)
    return layers


def run_route(project, name: str, frame, figures: bool = False,
              layers: bool = False, dest=None, parts=None) -> Outcome:
    """The whole job on one route: compute, its layers (:class:`LayerPart`),
    its own output files (its figures with ``figures``, its own layer files
    with ``layers``: every route's layers are in ``routes.gpkg`` anyway).

    ``dest``: the route's folder in the folder being built; where this
    process sees that folder's parent (the same machine, or a shared file
    system), the route's files are written there (atomically, as ``gisgrade
    run`` writes them) and its layers as Arrow files into ``parts``, and
    neither travels back. Elsewhere the files come back as bytes and the
    layers as tables. A bad input or a failure of the route is caught and
    becomes the ``status`` of its row; nothing here raises."""
    import time

    from .display import display_of
    from .output.layers import arrow_layer, geodataframes

    t0 = time.perf_counter()
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            from .pipeline import compute

            result = compute(project, frame=frame)
            display = display_of(project)
            pieces = {}
            for n, g in geodataframes(result, display).items():
                table, kinds = arrow_layer(g.assign(route=name))
                pieces[n] = LayerPart(kinds, g.crs, table)
            plan, prof = _figure_data(result)
            here = dest is not None and Path(dest).parent.is_dir()
            if here:
                result.write(dest, figures=figures, layers=layers)
                files = dict.fromkeys(sorted(str(p.relative_to(dest))
                                             for p in Path(dest).rglob("*") if p.is_file()))
                _write_parts(pieces, Path(parts))
            else:
                with tempfile.TemporaryDirectory(prefix="gisgrade-route-") as tmp:
                    out = Path(tmp) / "out"
                    result.write(out, figures=figures, layers=layers)
                    files = _read_tree(out)
    except InputError as exc:
        return Outcome(name, [_failed(name, str(exc))], error=str(exc),
                       seconds=time.perf_counter() - t0)
    except Exception as exc:  # a route's own failure must not stop the others
        reason = f"failed: {type(exc).__name__}: {first_line(exc)}"
        return Outcome(name, [_failed(name, reason)], error=reason,
                       seconds=time.perf_counter() - t0)
    return Outcome(name, route_rows(name, result), None, pieces, files, plan, prof,
                   time.perf_counter() - t0)


def _failed(name: str, reason: str) -> dict:
    return {**{c: None for c in COLUMNS}, "route": name, "scenario": "", "status": reason}


# --------------------------------------------------------------------------
# All routes
# --------------------------------------------------------------------------


def write_layers(layers: dict, path) -> None:
    """``routes.gpkg``: each layer's parts (:meth:`RoutesResult._parts`) merged
    (:func:`merge_parts`) and written as pyogrio's ``write_dataframe`` of one
    frame of every route would write them, one layer at a time."""
    from .cautions import CAUTIONS
    from .output.layers import unsynced_sqlite, write_gpkg_layer

    with unsynced_sqlite():  # the folder being built is swapped in whole
        for i, (name, parts) in enumerate(layers.items()):
            table, crs, kinds = merge_parts(parts)
            write_gpkg_layer(path, name, table, kinds, crs, i > 0,
                             f"gisgrade {name}, every route. CAUTION: {CAUTIONS}")


def layer_groups(layers: dict, n: int) -> list[dict]:
    """``layers`` (name -> parts) in at most ``n`` groups of about as many
    features each (the largest layer first, each to the lightest group; a
    layer counts 10 000 features more for its own setting up), each group in
    the layers' order: what each of ``n`` workers writes.

    >>> sizes = {"a": 10, "b": 900_000, "c": 500_000, "d": 450_000}
    >>> [list(g) for g in layer_groups({k: [LayerPart((), None, rows=v)] for k, v in sizes.items()}, 2)]
    [['a', 'b'], ['c', 'd']]
    """
    weight = {name: 10_000 + sum(p.rows for p in parts) for name, parts in layers.items()}
    groups: list[list[str]] = [[] for _ in range(max(1, min(n, len(layers))))]
    load = [0] * len(groups)
    for name in sorted(layers, key=lambda k: -weight[k]):
        i = load.index(min(load))
        groups[i].append(name)
        load[i] += weight[name]
    return [{k: layers[k] for k in layers if k in g} for g in groups if g]


def join_layers(parts: list, layers: dict, path) -> tuple:
    """``routes.gpkg`` at ``path`` from the GeoPackages ``parts`` that
    :func:`write_layers` wrote of each :func:`layer_groups` group: joined
    into the first (:func:`~gisgrade.output.geopackage.join_geopackages`),
    layers in order, which then becomes ``path``. Where they do not join
    (e.g. two CRSs without EPSG codes numbered alike), ``layers`` are written
    to ``path`` whole instead. ``parts`` are gone afterwards. Returns the
    file's :func:`~gisgrade.output.atomic.digest_of` for the manifest (read
    here, on the worker, while the client draws the figure)."""
    from .output.atomic import digest_of
    from .output.geopackage import join_geopackages

    first, *rest = parts
    if Path(path).is_file() and not Path(first).exists():
        return digest_of(path)  # (the task run again after it had joined and moved the file)
    if join_geopackages(first, rest, order=list(layers)):
        os.replace(first, path)
    else:
        log.debug("routes: the GeoPackage parts do not join; writing routes.gpkg whole")
        write_layers(layers, path)
        Path(first).unlink()
    for other in rest:
        Path(other).unlink()
    return digest_of(path)


def _write_whole(layers: dict, path) -> tuple:
    """:func:`write_layers` into one file on a worker, and its digest for the manifest."""
    from .output.atomic import digest_of

    write_layers(layers, path)
    return digest_of(path)


def _layers_on(client, layers: dict, tmp: Path):
    """``routes.gpkg`` written on the cluster: each worker writes a group of
    layers (:func:`layer_groups`) into a GeoPackage of its own in the folder
    being built, at once, and one joins them (:func:`join_layers`).
    ``(writes, whole)``: the futures of the group writes and of the whole
    file; one worker: no groups, the one file written at once."""
    workers = max(1, sum(client.nthreads().values()))
    groups = layer_groups(layers, min(workers, 3))  # (past three, the large layers are each alone)
    path = str(tmp / "routes.gpkg")
    if len(groups) == 1:
        return [], client.submit(_write_whole, layers, path, pure=False, key="gisgrade-routes-gpkg")
    parts = []
    for j, group in enumerate(groups):
        part = str(tmp / PARTS / f"routes-{j}.gpkg")
        parts.append(client.submit(_written, group, part, pure=False,
                                   key=f"gisgrade-routes-gpkg-{j}"))
    return parts, client.submit(join_layers, parts, layers, path, pure=False,
                                key="gisgrade-routes-gpkg")


def _on_this_machine(client) -> bool:
    """Whether every worker of ``client`` is on this machine (a LocalCluster's
    are, at loopback addresses): their cores are then this process's too."""
    from urllib.parse import urlsplit

    hosts = {urlsplit(a).hostname for a in client.scheduler_info().get("workers", {})}
    return bool(hosts) and all(h in ("127.0.0.1", "localhost", "::1") for h in hosts)


def _written(layers: dict, path: str) -> str:
    write_layers(layers, path)
    return path


def write_geoparquet(layers: dict, folder) -> None:
    """``parquet/<layer>.parquet``: each layer's parts merged, as GeoParquet."""
    folder = Path(folder)
    folder.mkdir()
    for name, parts in layers.items():
        table, crs, _ = merge_parts(parts)
        _geoframe(table, crs).to_parquet(folder / f"{name}.parquet", index=False)


def _geoframe(table, crs):
    """A merged layer's table as a GeoDataFrame (for GeoParquet)."""
    import geopandas as gpd

    df = table.to_pandas()
    df["geometry"] = gpd.GeoSeries.from_wkb(df["geometry"], crs=crs).values
    return gpd.GeoDataFrame(df, geometry="geometry", crs=crs)


def _put(outcome: Outcome, folder: Path) -> None:
    """Write the route's files into ``folder`` and let go of their bytes (a
    written file stays listed, its bytes ``None``)."""
    for rel, data in outcome.files.items():
        if data is None:
            continue
        path = folder / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(data)
    outcome.files = dict.fromkeys(outcome.files)


@dataclass
class RoutesResult:
    """Every route's outcome, in the layer's order; :meth:`write` writes them."""

    project: object
    outcomes: list  #: :class:`Outcome` per route
    folders: list  #: each route's folder name under OUT

    @property
    def table(self):
        """``routes.csv`` as a DataFrame: one row per route and scenario (:data:`COLUMNS`)."""
        import pandas as pd

        rows = [dict(r, folder=folder if o.files else "")
                for o, folder in zip(self.outcomes, self.folders) for r in o.rows]
        table = pd.DataFrame(rows, columns=list(COLUMNS))
        numeric = [c for c in COLUMNS if c not in ("route", "folder", "scenario", "status")]
        table[numeric] = table[numeric].apply(pd.to_numeric)  # failed rows: NaN, not None
        return table

    @property
    def failed(self) -> list[str]:
        return [o.name for o in self.outcomes if o.error is not None]

    def write(self, outdir, parquet: bool = False) -> list[Path]:
        """Write ``routes.csv``, ``routes.gpkg``, ``routes.png`` and each route's
        outputs under ``<route>/``, all at once into ``outdir`` (swapped in whole).
        ``parquet``: also ``routes.parquet`` (the table) and ``parquet/<layer>.parquet``
        (every route's layers as GeoParquet), columnar files for large runs."""
        from .output.atomic import atomic_folder

        project = self.project
        with atomic_folder(outdir, inputs=[project.path, *project.input_paths()]) as tmp:
            self.write_into(tmp, parquet)
        out = Path(outdir)
        return sorted(p for p in out.rglob("*") if p.is_file())

    def write_into(self, tmp: Path, parquet: bool = False, client=None) -> None:
        """:meth:`write` into the folder ``tmp`` being built (a route's files
        already written there by its worker, see ``run_routes(sink=...)``, are
        not written again). ``client``: a Dask client whose workers see
        ``tmp``: ``routes.gpkg`` (and the GeoParquet layers) are then written
        by the workers while this process writes the table and draws the
        figure; on this machine the figure waits for the workers' group writes
        (which take every core) and is drawn beside the join."""
        import time

        from .display import display_of
        from .output.csv import write_csv

        t0 = time.perf_counter()
        layers = self._parts()
        on_disk = all(p.path is not None for parts in layers.values() for p in parts)
        writes, jobs = [], []
        if client is not None and on_disk and layers:
            writes, whole = _layers_on(client, layers, tmp)
            jobs.append(whole)
            if parquet:
                jobs.append(client.submit(write_geoparquet, layers, str(tmp / "parquet"),
                                          pure=False, key="gisgrade-routes-parquet"))
        else:
            write_layers(layers, tmp / "routes.gpkg")
            if parquet:
                write_geoparquet(layers, tmp / "parquet")
        table = self.table
        write_csv(display_of(self.project).dual(table), tmp / "routes.csv")
        if parquet:
            table.to_parquet(tmp / "routes.parquet", index=False)
        for o, folder in zip(self.outcomes, self.folders):
            _put(o, tmp / folder)
        if writes and _on_this_machine(client):
            # the workers' group writes take every core of this machine, and the join
            # after them one: the figure is drawn beside the join, not beside the writes
            for w in writes:
                w.result()
            log.debug("routes: the groups of routes.gpkg written %.2f s", time.perf_counter() - t0)
        self._write_figure(tmp / "routes.png")
        log.debug("routes: routes.csv, routes.png %s %.2f s", "and routes.gpkg" if not jobs
                  else "(routes.gpkg on a worker)", time.perf_counter() - t0)
        from .output.atomic import vouch

        for job in jobs:
            done = job.result()  # an error there is raised here
            if job is jobs[0]:  # routes.gpkg, read where it was written
                vouch(tmp, "routes.gpkg", done)
        log.debug("routes: all written %.2f s", time.perf_counter() - t0)
        self._tidy(tmp)

    def _tidy(self, tmp: Path) -> None:
        """Remove what is not part of the result: the layers' Arrow parts, the
        folder of a route that failed after its worker wrote into it, and a
        half-written route folder a lost worker left."""
        import shutil

        shutil.rmtree(tmp / PARTS, ignore_errors=True)
        for o, folder in zip(self.outcomes, self.folders):
            if o.error is not None and (tmp / folder).exists():
                shutil.rmtree(tmp / folder, ignore_errors=True)
        for left in tmp.glob(".*.gisgrade-*"):
            shutil.rmtree(left, ignore_errors=True)

    def _parts(self) -> dict:
        """Each layer name -> the :class:`LayerPart` of every route that has it,
        in the routes' order (layers in :data:`~gisgrade.output.layers.GEOMETRY` order)."""
        from .output.layers import GEOMETRY

        by_layer: dict[str, list] = {}
        for o in self.outcomes:
            for name, part in o.layers.items():
                by_layer.setdefault(name, []).append(part)
        return {name: by_layer[name] for name in GEOMETRY if name in by_layer}

    def _write_figure(self, path: Path) -> None:
        from .display import display_of
        from .output.routes_figure import draw_routes

        draw_routes(self.outcomes, self.table, display_of(self.project), path, self.project)


def _cluster(workers: int | None, scheduler: str | None, n_routes: int):
    """A Dask client: on ``scheduler`` (an address), else a LocalCluster of
    ``workers`` processes (default: the machine's cores, at most one a route)."""
    import dask
    from distributed import Client, LocalCluster

    if scheduler:
        try:
            return Client(scheduler, timeout="10s"), None
        except Exception as exc:  # OSError, TimeoutError, ValueError for a bad address
            raise InputError(f"--scheduler {scheduler}: cannot reach a Dask scheduler there "
                             f"({first_line(exc)})") from None
    cores = os.cpu_count() or 1
    if workers and workers > cores:
        log.warning("--workers %d: more worker processes than the %d cores only adds start-up "
                    "time and memory", workers, cores)
    n = min(workers or cores, n_routes)  # never more workers than routes
    # (set before each worker process starts, which glibc's malloc needs; a
    # Nanny's own ``env`` is applied once the process runs)
    spawn = "distributed.nanny.pre-spawn-environ"
    environ = {**dask.config.get(spawn, default={}), **worker_environment()}
    preload = [*dask.config.get("distributed.worker.preload", default=[]), __name__]  # dask_setup
    with dask.config.set({spawn: environ, "distributed.worker.preload": preload}):
        # Dask's own logging: errors with -vv; else only the critical (a worker
        # whose heartbeat meets the scheduler already closed at the end logs an
        # ERROR with a traceback, a harmless race of Dask's shutdown; a route's
        # own failure is its row's status either way)
        quiet = logging.ERROR if log.isEnabledFor(logging.DEBUG) else logging.CRITICAL
        cluster = LocalCluster(n_workers=max(1, n), threads_per_worker=1, processes=True,
                               dashboard_address=None, silence_logs=quiet)
    return Client(cluster), cluster


def dask_setup(worker) -> None:
    """Dask's preload hook (this module is named in ``distributed.worker.preload``
    for our LocalCluster), run in each worker process as it starts: a Ctrl-C at
    the terminal reaches every process of the group, and the workers leave it
    to the main process, which closes the cluster and says the output folder
    is as it was (each worker would print a traceback of its own)."""
    import signal
    import threading

    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGINT, signal.SIG_IGN)


#: glibc's malloc settings for a LocalCluster's workers. Dask starts its
#: workers with ``MALLOC_TRIM_THRESHOLD_=65536`` (for long-lived workers, to
#: give memory back to the system at once), which also fixes the size from
#: which a block is mapped afresh from the kernel (mmap) and unmapped on
#: free at its 128 KiB default: every array of a route's stations and DEM
#: window then faults its pages in one by one, route after route. Our workers
#: live for one command: blocks up to 32 MiB (glibc's ceiling for the mmap
#: threshold on 64-bit, 4 * 1024 * 1024 * sizeof(long)) come from the heap and
#: the heap is kept. See mallopt(3), M_MMAP_THRESHOLD and M_TRIM_THRESHOLD (the
#: ceiling from memory of that page; tests/test_routes.py measures the faults).
#: A variable this process was started with is passed on instead.
MALLOC_ENVIRONMENT = {"MALLOC_MMAP_THRESHOLD_": str(32 << 20),
                      "MALLOC_TRIM_THRESHOLD_": str(1 << 30)}


def worker_environment() -> dict[str, str]:
    """The environment variables a LocalCluster's worker processes get over
    Dask's own (``distributed.nanny.pre-spawn-environ``): glibc's malloc
    thresholds (:data:`MALLOC_ENVIRONMENT`), each as this process has it
    where it has it.

    >>> env = worker_environment()
    >>> sorted(env)
    ['MALLOC_MMAP_THRESHOLD_', 'MALLOC_TRIM_THRESHOLD_']
    >>> import os
    >>> env["MALLOC_MMAP_THRESHOLD_"] == os.environ.get("MALLOC_MMAP_THRESHOLD_", "33554432")
    True
    """
    return {k: os.environ.get(k, v) for k, v in MALLOC_ENVIRONMENT.items()}


def run_routes(project, lines=None, *, workers: int | None = None, scheduler: str | None = None,
               figures: bool = False, layers: bool = False, progress=None,
               sink=None, parquet: bool = False) -> RoutesResult:
    """The whole job on every route; writes nothing (see :meth:`RoutesResult.write`),
    unless ``sink`` is given: a folder being built (``atomic_folder``) into
    which everything is written (:meth:`RoutesResult.write_into`, with
    ``parquet``). Each route's worker writes the route's own files and its
    layers (as Arrow files, see :func:`run_route`) there itself, so neither
    travels back nor is held here; ``routes.gpkg`` is then written by a
    worker while this process draws the figure. A worker that does not see
    ``sink`` sends them back, and they are written here.

    ``project``: a path or a loaded :class:`~gisgrade.project.Project`.
    ``lines``: a GeoDataFrame with a ``route`` column (one or more features a
    route) in place of the project's centerline layer (e.g. candidate
    routes). ``workers``: LocalCluster processes (``0``: every route in this
    process, no Dask); ``scheduler``: the address of an existing Dask
    scheduler whose workers see the project's files at the same paths.
    ``figures``: each route's figures too, ``layers``: each route's own layer
    files too (both off by default in a batch; ``routes.gpkg`` has every
    route's layers).
    ``progress(done, total)`` is called as routes finish.
    """
    from .project import Project, load

    project = project if isinstance(project, Project) else load(project)
    if lines is None:
        routes = read_routes(project)
    else:
        routes = group_routes(lines, "route", "lines", "the candidate routes")
    names = [n for n, _ in routes]
    folders = _unique_folders(names)
    total = len(routes)
    shown = progress or (lambda done, total: None)
    if sink is None:
        places = [(None, None)] * total
    else:
        places = [(str(Path(sink) / f), str(Path(sink) / PARTS / f)) for f in folders]

    def arrived(i, outcome, done):
        if sink is not None:
            _put(outcome, Path(sink) / folders[i])
        shown(done, total)

    shown(0, total)
    if workers == 0 and not scheduler:
        outcomes = []
        for i, (name, frame) in enumerate(routes):
            outcomes.append(run_route(project, name, frame, figures, layers, *places[i]))
            arrived(i, outcomes[-1], i + 1)
        result = RoutesResult(project, outcomes, folders)
        if sink is not None:
            result.write_into(Path(sink), parquet)
        return result
    import time

    t0 = time.perf_counter()
    client, cluster = _cluster(workers, scheduler, len(routes))
    log.debug("routes: Dask cluster %.2f s", time.perf_counter() - t0)
    try:
        outcomes = _on_dask(client, project, routes, places, figures, layers, arrived)
        log.debug("routes: %d routes run %.2f s", total, time.perf_counter() - t0)
        result = RoutesResult(project, outcomes, folders)
        if sink is not None:
            result.write_into(Path(sink), parquet, client=client)
        return result
    finally:
        t1 = time.perf_counter()
        client.close()
        if cluster is not None:
            cluster.close()
        log.debug("routes: Dask cluster closed %.2f s", time.perf_counter() - t1)


def _on_dask(client, project, routes, places, figures, layers, arrived) -> list[Outcome]:
    from distributed import as_completed

    shared = client.scatter(project, broadcast=True)
    # the longest routes first (submitted and ranked so), so that no worker is left
    # with a long one at the end
    longest = np.argsort([-float(frame.geometry.length.sum()) for _, frame in routes],
                         kind="stable")
    futures = [client.submit(run_route, shared, routes[i][0], routes[i][1], figures, layers,
                             *places[i], pure=False, key=f"gisgrade-route-{i}",
                             priority=len(routes) - rank)
               for rank, i in enumerate(longest)]
    index = {f.key: int(i) for f, i in zip(futures, longest)}
    outcomes = [None] * len(futures)
    for done, fut in enumerate(as_completed(futures), start=1):
        i = index[fut.key]
        try:
            outcomes[i] = fut.result()
        except Exception as exc:  # the worker itself died (memory, a killed process)
            reason = f"failed: the worker was lost ({first_line(exc)})"
            outcomes[i] = Outcome(routes[i][0], [_failed(routes[i][0], reason)], error=reason)
        arrived(i, outcomes[i], done)
    return outcomes
