"""Reprocessing archives: settings, input discovery, the per-file pipeline, the result store and resume, the summary.

Runs the pipeline in parallel (joblib: loky on one machine, Dask on a cluster).  May import every layer below it;
only :mod:`tauspec.cli` imports it.
"""
