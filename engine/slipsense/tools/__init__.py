"""Files in, files out: each function reads layers and DEMs, runs one step of
:mod:`slipsense.steps`, and writes GeoPackage layers with provenance.  No argument parsing here;
the CLI (and later the analysis-file runner) call these."""
