"""Adapters between files and the numpy core: DEMs (rasterio), vector layers (pyogrio/geopandas),
CRS and north references (pyproj).  Nothing here computes geology; it only moves arrays."""
