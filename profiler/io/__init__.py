"""Writers: atomic outputs, report text, JSON/CSV/GeoJSON/KML/GeoTIFF/KMZ, sheet information.

Used by the products (JSON-safe numbers, text) and by the commands; imports
nothing of :mod:`profiler.products`, :mod:`profiler.plot` or :mod:`profiler.cli`.
"""
