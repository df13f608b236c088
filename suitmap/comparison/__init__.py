"""Comparison stage: change between periods and agreement across climate models.

    change    change layers and change classes between two periods
    ensemble  median/percentiles/model agreement across climate models
"""
