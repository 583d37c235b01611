"""Snakemake rule files shipped with samplewright; see :func:`samplewright.rules_path`."""
