"""Model runs in: NetCDF/GRIB files -> the canonical Dataset; site lists; station series."""
