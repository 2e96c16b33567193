"""Read elevation rasters (GeoTIFF and whatever else GDAL reads) through rasterio."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import rasterio
import rasterio.errors
from rasterio._err import CPLE_BaseError  # GDAL's errors (rasterio.errors does not export it)
from rasterio.warp import transform_bounds
from rasterio.windows import Window, from_bounds

from tripsim.elevation import Dem
from tripsim.errors import DemError
from tripsim.io._files import input_file
from tripsim.io._limits import DEM_CELLS_MAX, DEM_ELEVATION_M

__all__ = ["RASTER_DRIVERS", "read_dem"]

#: GDAL drivers tried for elevation rasters: self-contained formats only, so that a
#: "raster" cannot be a virtual dataset pointing at other files or URLs (GDAL's VRT).
RASTER_DRIVERS = ("GTiff", "SRTMHGT", "AAIGrid", "HFA", "USGSDEM", "EHdr")


def read_dem(
    path: str | Path,
    *,
    bounds_deg: tuple[float, float, float, float] | None = None,
    band: int = 1,
) -> Dem:
    """Read an elevation raster, or the window of it that covers some bounds.

    Parameters
    ----------
    path : str or Path
        The raster (GeoTIFF, ...), with a CRS.
    bounds_deg : (west, south, east, north), optional
        WGS84 bounds to read (with a margin of two pixels); the whole raster
        when omitted.
    band : int, default 1
        Band holding elevation in metres.

    Returns
    -------
    Dem
        Elevations with NaN where the raster has no data.

    Raises
    ------
    DemError
        If the file is not a regular file within its size cap, cannot be read, has no
        CRS, does not overlap the bounds, covers too large an area for one read, or
        holds values outside :data:`tripsim.io._limits.DEM_ELEVATION_M`.
    """
    path = input_file(path, "dem", error=DemError)
    expected = f"expected GeoTIFF or another self-contained raster ({', '.join(RASTER_DRIVERS)})"
    with path.open("rb") as fh:
        if fh.read(256).lstrip().startswith(b"<"):  # GDAL would open XML as a virtual raster
            raise DemError(f"is XML, not raster data; {expected}", path)
    try:
        src_cm = rasterio.open(path)
    except (rasterio.errors.RasterioIOError, CPLE_BaseError) as exc:
        detail = str(exc).splitlines()[0][:200] if str(exc) else "unknown format"
        raise DemError(f"cannot read the raster ({detail}); {expected}", path) from None
    try:
        with src_cm as src:
            if src.driver not in RASTER_DRIVERS:
                raise DemError(f"is a {src.driver} dataset; {expected}", path)
            data, transform, crs = _read_window(src, path, bounds_deg, band)
    except DemError:
        raise
    except (rasterio.errors.RasterioError, CPLE_BaseError, ValueError, ZeroDivisionError) as exc:
        detail = str(exc).splitlines()[0][:200] if str(exc) else type(exc).__name__
        raise DemError(f"cannot read the raster: {detail}", path) from None
    elevation = np.ma.filled(data, np.nan)
    _check_values(elevation, path)
    return Dem(elevation_m=elevation, transform=transform, crs=crs, source=str(path))


def _read_window(src: rasterio.io.DatasetReader, path: Path,
                 bounds_deg: tuple[float, float, float, float] | None, band: int) -> tuple:
    if src.crs is None:
        raise DemError("the raster has no coordinate reference system", path)
    if not 1 <= band <= src.count:
        raise DemError(f"band {band} does not exist (the raster has {src.count})", path)
    if src.transform.determinant == 0 or not np.isfinite(src.transform.determinant):
        raise DemError("the raster's geotransform is degenerate (zero pixel size)", path)
    window = Window(0, 0, src.width, src.height)
    if bounds_deg is not None:
        west, south, east, north = transform_bounds("EPSG:4326", src.crs, *bounds_deg)
        want = from_bounds(west, south, east, north, transform=src.transform)
        want = Window(want.col_off - 2, want.row_off - 2, want.width + 4, want.height + 4)
        try:
            window = want.round_offsets().round_lengths().intersection(window)
        except rasterio.errors.WindowError:
            raise DemError("the raster does not cover the route's area", path) from None
    cells = int(window.width) * int(window.height)
    if cells > DEM_CELLS_MAX:
        raise DemError(f"the area to read is {int(window.width)} × {int(window.height)} cells, "
                       f"more than {DEM_CELLS_MAX:,}; use a coarser raster for so large an area",
                       path)
    data = src.read(band, window=window, masked=True).astype(float)
    return data, src.window_transform(window), src.crs.to_wkt()


def _check_values(elevation: np.ndarray, path: Path) -> None:
    """Refuse values no terrain has (an undeclared no-data marker such as 1e30 or -32768)."""
    lo, hi = DEM_ELEVATION_M
    bad = np.isinf(elevation) | (elevation < lo) | (elevation > hi)
    if bad.any():
        row, col = (int(i[0]) for i in np.nonzero(bad))
        raise DemError(f"{int(bad.sum())} cells hold elevations outside {lo:g} to {hi:g} m "
                       f"(first: {elevation[row, col]:g} at row {row}, column {col} of the read "
                       "window); set the raster's no-data value if they mark missing data", path)
