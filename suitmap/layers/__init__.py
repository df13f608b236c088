"""Layers stage: season statistics over chunked grids → per-period layers.

    seasons         season-year labels and completeness on any CF calendar
    compute         season statistics per chunk (apply_ufunc) → period layers
    monthly_normal  the ``normal`` route of monthly input (layers from monthly means)
    metadata        CF attributes and class codes of every layer (the only place)
    api             ``suitmap.degree_days`` & co. on numpy, scalars and (lazy) xarray
    table_cache     the fast tables kept on disk between runs
"""
