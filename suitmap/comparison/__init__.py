"""Comparison stage: change between periods and agreement across climate models.

    change    change layers and change classes between two periods
    ensemble  median/percentiles/model agreement across climate models
    robustness  robust / no robust signal / conflicting signals (IPCC AR6 Atlas level)
    reference   what a change is measured against; model bias layers
"""
