"""Many runs of the pipeline: compare designs, variants of one design, layout sweeps, uncertainty bands."""
