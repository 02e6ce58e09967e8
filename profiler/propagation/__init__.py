"""Propagation physics: geometry, free space, diffraction (single profiles and batches), spherical Earth,
polarization, and the compiled coverage kernel.

Pure numpy functions (the kernel compiles the same terms with numba); imports
only :mod:`profiler.terrain` and the top-level helpers.
"""
