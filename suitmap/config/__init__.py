"""Configuration stage: the organism profile and the run file (TOML → validated dataclasses).

    toml_file      the TOML reader (one-line errors naming the file)
    profile        organism profile: thresholds, method, survival, season, rate curve
    runfile        run file: periods, scenarios, outputs, compute settings
    scenario_sets  ``[[scenario_set]]`` templates expanded into scenarios
    set_reference  a set's historical period, change_against and delta keys
    library/       the bundled INVENTED demonstration profiles

Imports no xarray or dask: a run file can be checked without the climate stack.
"""
