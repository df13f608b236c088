"""Pipeline stage: one run file from inputs to the output folder.

    analysis    open_period / check_run / compute_run / run: the API the CLI calls
    folder      the output folder: lock, state, per-period layer cache (resume)
    finished    a finished, unchanged run is not redone
    outputs     write every layer, figure and the manifest, staged then renamed
    scheduling  threaded scheduler, local or remote dask.distributed cluster
    demo        locates the bundled sample data and runs it
"""
