"""What the commands compute: a link, a mast height, a network, a coverage map, a siting.

Each product returns a result (report dict and arrays) and writes no file;
the writers are in :mod:`profiler.io` and :mod:`profiler.plot`.  The API
functions ``profiler.link``, ``profiler.mast``, ``profiler.network``,
``profiler.coverage`` and ``profiler.siting`` live in :mod:`profiler.api`.
"""
