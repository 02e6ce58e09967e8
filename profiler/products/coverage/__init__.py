"""Coverage of a site: radials through the link engine onto a grid (``map.coverage``)."""
