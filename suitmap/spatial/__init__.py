"""Spatial stage: geometry on grids, knowing nothing of climate or organisms.

    regrid   snap layers or daily fields onto a template grid; grid comparison

It sits below ``climate`` and ``layers`` because both call it (delta-change
downscaling regrids a model's climatology; the pipeline snaps layers).
"""
