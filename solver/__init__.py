"""Rondo's solver: plain data in, plain data out, no web imports.

Positions are always (latitude, longitude) in decimal degrees, WGS-84.
"""
