"""Read elevation rasters (GeoTIFF and whatever else GDAL reads) through rasterio."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import rasterio
import rasterio.errors
from rasterio.warp import transform_bounds
from rasterio.windows import Window, from_bounds

from tripsim.elevation import Dem
from tripsim.errors import DemError

__all__ = ["read_dem"]


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
        If the file cannot be read, has no CRS, or does not overlap the bounds.
    """
    path = Path(path)
    try:
        src_cm = rasterio.open(path)
    except rasterio.errors.RasterioIOError as exc:
        raise DemError(f"cannot read the raster: {exc}", path) from None
    with src_cm as src:
        if src.crs is None:
            raise DemError("the raster has no coordinate reference system", path)
        if not 1 <= band <= src.count:
            raise DemError(f"band {band} does not exist (the raster has {src.count})", path)
        window = Window(0, 0, src.width, src.height)
        if bounds_deg is not None:
            west, south, east, north = transform_bounds("EPSG:4326", src.crs, *bounds_deg)
            want = from_bounds(west, south, east, north, transform=src.transform)
            want = Window(want.col_off - 2, want.row_off - 2, want.width + 4, want.height + 4)
            try:
                window = want.round_offsets().round_lengths().intersection(window)
            except rasterio.errors.WindowError:
                raise DemError("the raster does not cover the route's area", path) from None
        data = src.read(band, window=window, masked=True).astype(float)
        transform = src.window_transform(window)
        crs = src.crs.to_wkt()
    return Dem(elevation_m=np.ma.filled(data, np.nan), transform=transform, crs=crs,
               source=str(path))
