"""Geometry for whitegauge: grids, area forms, loops, winding numbers, polygon
arrangements and axial-gauge plans. Group-agnostic; imports only :mod:`noise`.
"""
