"""GeoPackages joined at the SQLite level: the layers of several files moved into one.

A GeoPackage is one SQLite database [1]_. GDAL writes a feature layer as a
table (``fid`` and the geometry as GeoPackage binary), rows in the
``gpkg_contents``, ``gpkg_geometry_columns``, ``gpkg_extensions`` and
GDAL's ``gpkg_ogr_contents`` tables, an R*Tree spatial index [2]_ (a
virtual table kept in three ordinary "shadow" tables) and the triggers that
keep the index and the feature count current. :func:`join_geopackages`
copies all of that, row for row, from other files GDAL wrote into one of
them: no feature goes through GDAL again, and the spatial index is copied
as it was built rather than rebuilt. It lets ``routes`` write the layers
of ``routes.gpkg`` on several workers at once and join them in a second or
two.

It only moves what it knows. A file with anything else (other tables,
metadata, tiles, an extension not on one of its layers), a layer name in
both files, or a spatial reference id that means different systems in the
two files (GDAL numbers a system without an EPSG code from 100000 in each
file) is refused: :func:`join_geopackages` returns ``False`` and changes
nothing, and the caller writes the layers the ordinary way.

References
----------
.. [1] OGC GeoPackage Encoding Standard, version 1.3.1 (OGC 12-128r18),
   clauses 1.1.2 (spatial reference systems), 1.1.3 (contents), 2.1.5
   (geometry columns) and F.3 (RTree spatial indexes).
.. [2] SQLite, "The SQLite R*Tree Module", sqlite.org/rtree.html, section
   "Shadow tables".
.. [3] SQLite, "SQLite Autoincrement", sqlite.org/autoinc.html: the largest
   rowid a table ever held, one row of ``sqlite_sequence`` a table.
"""
from __future__ import annotations

import os
import sqlite3
from pathlib import Path

__all__ = ["join_geopackages", "layer_names"]

#: Tables of the GeoPackage itself (and SQLite's own sequence), not layers.
SYSTEM = frozenset({
    "gpkg_spatial_ref_sys", "gpkg_contents", "gpkg_geometry_columns", "gpkg_ogr_contents",
    "gpkg_extensions", "gpkg_tile_matrix_set", "gpkg_tile_matrix", "gpkg_data_columns",
    "gpkg_data_column_constraints", "gpkg_metadata", "gpkg_metadata_reference",
    "sqlite_sequence"})

#: The per-layer rows copied with each layer.
PER_LAYER = ("gpkg_contents", "gpkg_geometry_columns", "gpkg_ogr_contents", "gpkg_extensions")

#: The most files joined into one at once: SQLite attaches at most 10 databases
#: besides ``main`` by default (SQLITE_MAX_ATTACHED, sqlite.org/limits.html).
MAX_OTHERS = 10

#: The shadow tables of an R*Tree virtual table [2]_.
SHADOWS = ("node", "parent", "rowid")


class _Refused(Exception):
    """The files hold something :func:`join_geopackages` does not move."""


def _quoted(name: str) -> str:
    return '"' + name.replace('"', '""') + '"'


def _table_sql(con, schema: str, table: str) -> str | None:
    """The ``CREATE`` statement of ``table`` in ``schema``; None where there is no such table."""
    row = con.execute(f"SELECT sql FROM {schema}.sqlite_master WHERE type = 'table' AND name = ?",
                      (table,)).fetchone()
    return None if row is None else row[0]


def _layer_objects(con, schema: str, layers: list[str]) -> dict[str, list[tuple]]:
    """Each layer -> its ``(type, name, sql)`` objects in ``schema``: its table,
    indexes and triggers, and the R*Tree ``rtree_<layer>_<column>`` with its
    shadow tables. Anything else in the file but the GeoPackage's own tables
    raises :class:`_Refused`."""
    rows = con.execute(f"SELECT type, name, tbl_name, sql FROM {schema}.sqlite_master").fetchall()
    columns = dict(con.execute(f"SELECT table_name, column_name FROM {schema}.gpkg_geometry_columns"))
    owner = {}
    for layer in layers:
        owner[layer] = layer
        if layer in columns:
            rtree = f"rtree_{layer}_{columns[layer]}"
            owner[rtree] = layer
            owner.update({f"{rtree}_{s}": layer for s in SHADOWS})
    found: dict[str, list[tuple]] = {layer: [] for layer in layers}
    for kind, name, table, sql in rows:
        if table in SYSTEM:
            continue
        if table not in owner:
            raise _Refused(f"{kind} {name}")
        found[owner[table]].append((kind, name, sql))
    return found


def _check(con, schema: str, layers: list[str]) -> None:
    """Refuse what cannot simply move from ``schema`` into ``main``."""
    mine = {r[0] for r in con.execute("SELECT table_name FROM main.gpkg_contents")}
    clash = mine.intersection(layers)
    if clash:
        raise _Refused(f"layer {sorted(clash)[0]} in both")
    for table in ("gpkg_metadata", "gpkg_metadata_reference", "gpkg_data_columns",
                  "gpkg_tile_matrix_set"):
        if _table_sql(con, schema, table) and con.execute(
                f"SELECT 1 FROM {schema}.{table} LIMIT 1").fetchone():
            raise _Refused(table)
    stray = _table_sql(con, schema, "gpkg_extensions") and con.execute(
        f"SELECT extension_name FROM {schema}.gpkg_extensions WHERE table_name IS NULL "
        f"OR table_name NOT IN ({','.join('?' * len(layers))})", layers).fetchone()
    if stray:
        raise _Refused(f"extension {stray[0]}")
    if con.execute(f"SELECT 1 FROM {schema}.gpkg_contents WHERE data_type != 'features'").fetchone():
        raise _Refused("a layer that is not features")
    for srs_id, definition in con.execute(
            f"SELECT srs_id, definition FROM {schema}.gpkg_spatial_ref_sys").fetchall():
        here = con.execute("SELECT definition FROM main.gpkg_spatial_ref_sys WHERE srs_id = ?",
                           (srs_id,)).fetchone()
        if here is not None and here[0] != definition:
            raise _Refused(f"srs_id {srs_id} names two systems")


def _move(con, schema: str, layers: list[str]) -> None:
    """Copy every layer of ``schema`` into ``main`` (inside the caller's transaction)."""
    objects = _layer_objects(con, schema, layers)
    # GDAL makes gpkg_extensions with the first extension (a spatial index):
    # a file without one has none, and takes the other's where it has one
    per_layer = [t for t in PER_LAYER if _table_sql(con, schema, t)]
    if "gpkg_extensions" in per_layer and not _table_sql(con, "main", "gpkg_extensions"):
        con.execute(_table_sql(con, schema, "gpkg_extensions"))
    con.execute(f"INSERT INTO main.gpkg_spatial_ref_sys SELECT * FROM {schema}.gpkg_spatial_ref_sys "
                "WHERE srs_id NOT IN (SELECT srs_id FROM main.gpkg_spatial_ref_sys)")
    for layer in layers:
        objs = objects[layer]
        tables = {name: sql for kind, name, sql in objs if kind == "table"}
        con.execute(tables[layer])
        con.execute(f"INSERT INTO main.{_quoted(layer)} SELECT * FROM {schema}.{_quoted(layer)}")
        for name, sql in tables.items():
            if sql.upper().startswith("CREATE VIRTUAL TABLE"):
                con.execute(sql)  # an empty index; its shadow tables then take the built one
                for shadow in SHADOWS:
                    sh = _quoted(f"{name}_{shadow}")
                    con.execute(f"DELETE FROM main.{sh}")
                    con.execute(f"INSERT INTO main.{sh} SELECT * FROM {schema}.{sh}")
        for kind, _, sql in objs:  # indexes, then triggers once the rows are in
            if kind == "index" and sql:
                con.execute(sql)
        # the rows' INSERT gave the layer a sequence row (its largest fid); the
        # file's own (the largest fid it ever gave) takes its place: one row a table [3]_
        con.execute("DELETE FROM main.sqlite_sequence WHERE name = ?", (layer,))
        con.execute(f"INSERT INTO main.sqlite_sequence SELECT * FROM {schema}.sqlite_sequence "
                    "WHERE name = ?", (layer,))
        for table in per_layer:
            con.execute(f"INSERT INTO main.{table} SELECT * FROM {schema}.{table} "
                        "WHERE table_name = ?", (layer,))
        for kind, _, sql in objs:
            if kind == "trigger":
                con.execute(sql)


def _reorder(con, order: list[str]) -> None:
    """List the layers in ``order`` (GDAL lists them in ``gpkg_contents``' row
    order); layers not named keep their place after those named."""
    rows = con.execute("SELECT * FROM main.gpkg_contents ORDER BY rowid").fetchall()
    if not rows:
        return
    rank = {name: i for i, name in enumerate(order)}
    rows.sort(key=lambda r: rank.get(r[0], len(rank)))
    con.execute("DELETE FROM main.gpkg_contents")
    con.executemany(f"INSERT INTO main.gpkg_contents VALUES ({','.join('?' * len(rows[0]))})", rows)


def join_geopackages(target, others, order=None) -> bool:
    """Move every layer of the GeoPackages ``others`` (written by GDAL, as
    :func:`gisgrade.routes.write_layers` writes them) into ``target``, then
    list the layers in ``order`` (names; optional). One transaction: on
    ``True`` the layers are in ``target`` and ``others`` are unchanged; on
    ``False`` (something that does not simply move, see the module's text,
    or a file that is not a GeoPackage) ``target`` is as it was.

    The target is written without SQLite's sync (``synchronous = OFF``):
    it is meant for files in a folder that is swapped in whole once written
    (``output.atomic``), where a crash loses the folder, not one file.

    Each layer keeps its rows and feature ids, its spatial index (copied,
    not rebuilt), feature count, extent, description and spatial reference.

    >>> join_geopackages("/nonexistent/a.gpkg", [])
    Traceback (most recent call last):
    ...
    FileNotFoundError: /nonexistent/a.gpkg
    """
    target = Path(target)
    if not target.is_file():
        raise FileNotFoundError(str(target))
    others = [os.fspath(o) for o in others]
    for other in others:  # (SQLite would make an empty file of a missing one)
        if not Path(other).is_file():
            raise FileNotFoundError(other)
    if len(others) > MAX_OTHERS:
        raise ValueError(f"at most {MAX_OTHERS} files join at once (SQLite attaches 10)")
    con = sqlite3.connect(target, isolation_level=None)
    try:
        try:  # (a file that is not a database fails here: nothing to join)
            con.execute("PRAGMA synchronous = OFF")  # the caller's folder is swapped in whole
            schemas = [f"other{i}" for i in range(len(others))]
            for schema, other in zip(schemas, others):
                con.execute(f"ATTACH DATABASE ? AS {schema}", (other,))
            con.execute("BEGIN")
            for schema in schemas:
                layers = [r[0] for r in con.execute(f"SELECT table_name FROM {schema}.gpkg_contents")]
                _check(con, schema, layers)
                _move(con, schema, layers)
            if order:
                _reorder(con, list(order))
            con.execute("COMMIT")
        except (_Refused, sqlite3.Error):
            if con.in_transaction:  # (SQLite rolls some errors back itself)
                con.execute("ROLLBACK")
            return False
    finally:
        con.close()
    return True


def layer_names(path) -> list[str]:
    """The layers of a GeoPackage in the order GDAL lists them (the row order
    of ``gpkg_contents``; its primary-key index would give them sorted)."""
    con = sqlite3.connect(f"file:{os.fspath(path)}?mode=ro", uri=True)
    try:
        return [r[0] for r in con.execute("SELECT table_name FROM gpkg_contents ORDER BY rowid")]
    finally:
        con.close()

