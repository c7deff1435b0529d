"""areal from Python: a species' suitability raster and occurrence records into a range.

Built on the areal Rust library through PyO3 (no command line involved):

- :func:`range` runs what ``areal range`` runs, with its options as keyword arguments, and
  returns the summary (summary.json as a dict) and the paths of the files written.
- :func:`omission_threshold` applies the threshold rule to an array of record values.
- :func:`cell_areas_km2` gives the true area of every cell of a grid (ellipsoidal).

Every area is a model-based estimate; choose the omission E before looking at the results;
an assessment is for the responsible authority (see the README's cautions).
"""

from __future__ import annotations

import json
import os
from typing import Any, Dict, Optional

import numpy as np

from ._areal import ArealError, __version__
from . import _areal

__all__ = ["range", "omission_threshold", "cell_areas_km2", "cell_areas_with_method", "ArealError",
           "__version__"]

#: Files `range` may write, by key (the same names as the CLI's outputs).
OUTPUT_FILES = {
    "classes": "classes.tif",
    "classes_aux": "classes.tif.aux.xml",
    "classes_style": "classes.qml",
    "patches": "patches.csv",
    "records": "records.csv",
    "summary": "summary.json",
    "gpkg": "range.gpkg",
    "equal_area_gpkg": "range-equal-area.gpkg",
    "range_geojson": "range.geojson",
    "patches_geojson": "patches.geojson",
    "unreachable_geojson": "unreachable.geojson",
    "accessible_geojson": "accessible.geojson",
    "records_geojson": "records.geojson",
    "range_style": "range.qml",
    "patches_style": "patches.qml",
    "unreachable_style": "unreachable.qml",
    "accessible_style": "accessible.qml",
    "records_style": "records.qml",
}


def range(  # noqa: A001 - the name of the CLI's subcommand
    suitability: "os.PathLike[str] | str",
    records: "os.PathLike[str] | str",
    out: "os.PathLike[str] | str",
    *,
    omission: Optional[float] = None,
    threshold: Optional[float] = None,
    accessible: "os.PathLike[str] | str | None" = None,
    buffer_km: Optional[float] = None,
    hull_buffer_km: Optional[float] = None,
    connectivity: int = 8,
    keep_duplicates: bool = False,
    lon_col: Optional[str] = None,
    lat_col: Optional[str] = None,
    records_crs: str = "EPSG:4326",
    records_layer: Optional[str] = None,
    overwrite: bool = False,
    vectors: bool = False,
    vector_crs: Optional[str] = None,
    simplify_m: Optional[float] = None,
    aoo_cell_km: float = 2.0,
    min_patch_km2: Optional[float] = None,
    gap_km: Optional[float] = None,
    keep_dropped: bool = False,
    no_metrics: bool = False,
) -> Dict[str, Any]:
    """Run ``areal range`` in this process.

    Keyword arguments are the CLI options with ``_`` for ``-`` (``--buffer-km`` is
    ``buffer_km``); give exactly one of ``omission`` (E, percent) and ``threshold``.
    ``vector_crs="auto"`` is ``--vector-crs`` without a value.

    Returns ``{"summary": dict, "paths": {key: path}}``: the summary is summary.json as
    written; ``paths`` holds every file written (keys as in :data:`OUTPUT_FILES`).
    Raises :class:`ArealError` (with ``exit_code``) on bad input, options or outputs.
    """
    text = _areal.run_range(
        os.fspath(suitability),
        os.fspath(records),
        os.fspath(out),
        omission=omission,
        threshold=threshold,
        accessible=None if accessible is None else os.fspath(accessible),
        buffer_km=buffer_km,
        hull_buffer_km=hull_buffer_km,
        connectivity=connectivity,
        keep_duplicates=keep_duplicates,
        lon_col=lon_col,
        lat_col=lat_col,
        records_crs=records_crs,
        records_layer=records_layer,
        overwrite=overwrite,
        vectors=vectors,
        vector_crs=vector_crs,
        simplify_m=simplify_m,
        aoo_cell_km=aoo_cell_km,
        min_patch_km2=min_patch_km2,
        gap_km=gap_km,
        keep_dropped=keep_dropped,
        metrics=not no_metrics,
    )
    paths = {}
    for key, name in OUTPUT_FILES.items():
        p = os.path.join(os.fspath(out), name)
        if os.path.exists(p):
            paths[key] = p
    return {"summary": json.loads(text), "paths": paths}


def omission_threshold(values, omission: Optional[float] = None,
                       threshold: Optional[float] = None) -> Dict[str, Any]:
    """The threshold rule on record values (any array-like of numbers).

    With ``omission=E``: k = floor(n*E/100) lowest values are dropped and T is the lowest
    remaining one (the least training presence threshold when E = 0, Pearson et al. 2007).
    ``areal range`` feeds it one value per occupied cell unless duplicates are kept; here
    you pass the values you want counted. NaN or infinite values raise ArealError.

    Returns ``{"value": T, "method", "records_used": n, "records_dropped": k,
    "records_omitted": values strictly below T}``.
    """
    v = np.ascontiguousarray(np.asarray(values, dtype=np.float64).ravel())
    t, method, n, k, omitted = _areal.omission_threshold(v, omission=omission, threshold=threshold)
    return {"value": t, "method": method, "records_used": n, "records_dropped": k,
            "records_omitted": omitted}


def cell_areas_km2(source=None, *, transform=None, shape=None, crs=None):
    """True area (km2) of every cell of a grid, as a ``(height, width)`` float64 array.

    Give a raster file path, an open rasterio dataset, or ``transform`` (GDAL's 6-tuple or a
    rasterio/affine ``Affine``), ``shape=(height, width)`` and ``crs`` (EPSG code, WKT, PROJ
    string or a rasterio CRS). The areas are those areal uses: exact ellipsoidal cell areas
    on lon/lat grids (authalic latitude, Snyder 1987), the cell size on equal-area
    projections, the cell's corners on the ellipsoid otherwise. Cells outside a projection's
    domain are NaN. :func:`cell_areas_with_method` also returns the method in words.
    """
    return cell_areas_with_method(source, transform=transform, shape=shape, crs=crs)[0]


def cell_areas_with_method(source=None, *, transform=None, shape=None, crs=None):
    """As :func:`cell_areas_km2`, returning ``(array, method in words)``."""
    if isinstance(source, (str, os.PathLike)):
        width, height, gt, wkt = _areal.raster_grid(os.fspath(source))
        return _areal.cell_areas_km2(width, height, gt, wkt)
    if source is not None:
        transform, shape, crs = source.transform, (source.height, source.width), source.crs
    if transform is None or shape is None or crs is None:
        raise ArealError("cell_areas_km2: give a raster path or dataset, or transform, shape and crs")
    gt = transform.to_gdal() if hasattr(transform, "to_gdal") else tuple(transform)
    crs_text = crs.to_wkt() if hasattr(crs, "to_wkt") else str(crs)
    height, width = int(shape[0]), int(shape[1])
    return _areal.cell_areas_km2(width, height, [float(x) for x in gt], crs_text)
