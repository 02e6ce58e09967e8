"""Old module paths (before the packages of 0.2), kept for one release with a ``DeprecationWarning``.

``profiler.dem`` is now ``profiler.terrain.elevation``, ``profiler.radio`` is
``profiler.engine.radio``, ... (:data:`MOVED`).  :func:`install` (called by
``profiler/__init__``) puts one finder on ``sys.meta_path`` that answers an old
name with a small alias module that warns once on import, naming the new
module, and hands out the new module's objects (the same objects: ``profiler.dem.ElevationModel is
profiler.terrain.elevation.ElevationModel``).  A name an old module only
re-exported is looked up where it lives now (:data:`NAMES`), with a warning
naming that place.  Nothing is imported until an old name is asked for.
"""

import sys
import types
import warnings

MOVED = {
    'profiler.dem': 'profiler.terrain.elevation',
    'profiler.dem_sources': 'profiler.terrain.sources',
    'profiler.dem_mosaic': 'profiler.terrain.mosaic',
    'profiler.dem_provenance': 'profiler.terrain.source_info',
    'profiler.provenance': 'profiler.terrain.digests',
    'profiler.voids': 'profiler.terrain.voids',
    'profiler.datum': 'profiler.terrain.datum',
    'profiler.magnetic': 'profiler.terrain.magnetic',
    'profiler.path': 'profiler.terrain.geodesic',
    'profiler.geometry': 'profiler.propagation.geometry',
    'profiler.diffraction': 'profiler.propagation.diffraction',
    'profiler.diffraction_engine': 'profiler.propagation.diffraction_batch',
    'profiler.spherical_earth': 'profiler.propagation.spherical_earth',
    'profiler.polarization': 'profiler.propagation.polarization',
    'profiler.prefix_kernel': 'profiler.propagation.prefix_kernel',
    'profiler.bands': 'profiler.lora.bands',
    'profiler.regional': 'profiler.lora.regional',
    'profiler.lora_modem': 'profiler.lora.modem',
    'profiler.lorawan': 'profiler.lora.lorawan',
    'profiler.budget': 'profiler.lora.budget',
    'profiler.rf_exposure': 'profiler.lora.rf_exposure',
    'profiler.radio': 'profiler.engine.radio',
    'profiler.cluster': 'profiler.engine.cluster',
    'profiler.analysis': 'profiler.products.link',
    'profiler.mast': 'profiler.products.mast.solve',
    'profiler.mast_clearance': 'profiler.products.mast.clearance',
    'profiler.mast_search': 'profiler.products.mast.search',
    'profiler.mast_split': 'profiler.products.mast.split',
    'profiler.mast_result': 'profiler.products.mast.result',
    'profiler.network_analysis': 'profiler.products.network',
    'profiler.sites': 'profiler.products.sites',
    'profiler.coverage_map': 'profiler.products.coverage.map',
    'profiler.coverage_grid': 'profiler.products.coverage.grid',
    'profiler.coverage_radials': 'profiler.products.coverage.radials',
    'profiler.setcover': 'profiler.products.siting.setcover',
    'profiler.siting_report': 'profiler.products.siting.report',
    'profiler.coverage_io': 'profiler.io.coverage',
    'profiler.outputs': 'profiler.io.outputs',
    'profiler.report': 'profiler.io.report',
    'profiler.jsonsafe': 'profiler.io.jsonsafe',
    'profiler.exports': 'profiler.io.exports',
    'profiler.exports_network': 'profiler.io.network_exports',
    'profiler.sheetinfo': 'profiler.io.sheetinfo',
}
"""Old module -> new module."""

NAMES = {
    'profiler.dem': {
        'FileDigests': 'profiler.terrain.digests',
        'RASTER_SUFFIXES': 'profiler.terrain.sources',
        'describe_raster': 'profiler.terrain.sources',
        'expand_path': 'profiler.terrain.sources',
        'linear_unit_m': 'profiler.terrain.sources',
        'metres_per_degree': 'profiler.terrain.sources',
        'open_dataset': 'profiler.terrain.sources',
        'root_cause': 'profiler.terrain.sources',
        'SourceInfo': 'profiler.terrain.source_info',
        'build_groups': 'profiler.terrain.mosaic',
        'fill_voids_along_profile': 'profiler.terrain.voids',
    },
    'profiler.dem_sources': {
        'SourceInfo': 'profiler.terrain.source_info',
        'Tile': 'profiler.terrain.mosaic',
    },
    'profiler.dem_provenance': {
        'file_sha256': 'profiler.terrain.digests',
    },
    'profiler.diffraction': {
        'diffraction_batch': 'profiler.propagation.diffraction_batch',
        'diffraction_finish': 'profiler.propagation.diffraction_batch',
        'diffraction_reductions': 'profiler.propagation.diffraction_batch',
        'j_knife_edge_db': 'profiler.propagation.diffraction_batch',
        'j_knife_edge_exact_db': 'profiler.propagation.diffraction_batch',
        'spherical_earth_db': 'profiler.propagation.spherical_earth',
    },
    'profiler.diffraction_engine': {
        'spherical_earth_db': 'profiler.propagation.spherical_earth',
    },
    'profiler.bands': {
        'NEAR_FIELD_RULE_OF_THUMB_M': 'profiler.propagation.free_space',
        'NEAR_FIELD_WAVELENGTHS': 'profiler.propagation.free_space',
        'SPEED_OF_LIGHT_M_S': 'profiler.propagation.free_space',
        'wavelength_m': 'profiler.propagation.free_space',
    },
    'profiler.lorawan': {
        'LORAWAN_OVERHEAD_BYTES': 'profiler.lora.regional',
        'Plan': 'profiler.lora.regional',
        'duty_cycle_at': 'profiler.lora.regional',
        'max_app_payload_bytes': 'profiler.lora.regional',
    },
    'profiler.budget': {
        'free_space_term_db': 'profiler.propagation.free_space',
        'LORA_BANDWIDTHS_KHZ': 'profiler.lora.modem',
        'LORA_LDRO_SYMBOL_TIME_MS': 'profiler.lora.modem',
        'LORA_SNR_MIN_DB': 'profiler.lora.modem',
        'LORA_SPREADING_FACTORS': 'profiler.lora.modem',
        'THERMAL_NOISE_DBM_PER_HZ': 'profiler.lora.modem',
        'lora_sensitivity_dbm': 'profiler.lora.modem',
        'lora_symbol_time_ms': 'profiler.lora.modem',
        'lora_table': 'profiler.lora.modem',
        'lora_time_on_air_ms': 'profiler.lora.modem',
        'lowest_closing_sf': 'profiler.lora.modem',
        'uplinks_per_hour': 'profiler.lora.modem',
        'free_space_loss_db': 'profiler.propagation.free_space',
        'near_field_distance_m': 'profiler.propagation.free_space',
        'polarization_angle_deg': 'profiler.propagation.polarization',
        'polarization_mismatch_db': 'profiler.propagation.polarization',
    },
    'profiler.radio': {
        'Plan': 'profiler.lora.regional',
        'dwell_time_limit_ms': 'profiler.lora.regional',
        'max_tx_power_dbm': 'profiler.lora.regional',
        'SPEED_OF_LIGHT_M_S': 'profiler.propagation.free_space',
    },
    'profiler.analysis': {
        'DIFFRACTION_METHODS': 'profiler.engine.radio',
        'RadioSettings': 'profiler.engine.radio',
        'check_separation': 'profiler.engine.radio',
        'diffraction_losses': 'profiler.engine.radio',
        'radio_results': 'profiler.engine.radio',
        'NEAR_FIELD_RULE_OF_THUMB_M': 'profiler.propagation.free_space',
        'NEAR_FIELD_WAVELENGTHS': 'profiler.propagation.free_space',
        'wavelength_m': 'profiler.propagation.free_space',
        'TerrainProfile': 'profiler.terrain.profile',
        'geometry_batch': 'profiler.engine.geometry',
        'json_clean': 'profiler.io.jsonsafe',
        'json_number': 'profiler.io.jsonsafe',
    },
    'profiler.mast': {
        'MARGIN_TOLERANCE_M': 'profiler.products.mast.search',
        'MAST_BATCH': 'profiler.products.mast.search',
        'MAX_GRID_POINTS': 'profiler.products.mast.search',
        'MONOTONE_TOLERANCE_DB': 'profiler.products.mast.search',
        'MastProblem': 'profiler.products.mast.search',
        'height_grid': 'profiler.products.mast.search',
        'margin_criterion': 'profiler.products.mast.search',
        'monotone_note': 'profiler.products.mast.search',
        'table_rows': 'profiler.products.mast.search',
        'MastResult': 'profiler.products.mast.result',
        'SCHEMA': 'profiler.products.mast.result',
        'feasible_binding': 'profiler.products.mast.result',
        'infeasible_outcome': 'profiler.products.mast.result',
        'per_extra_metre': 'profiler.products.mast.result',
        'RadioSettings': 'profiler.engine.radio',
        'SOLVE_ENDS': 'profiler.products.mast.clearance',
        'clearance_criteria': 'profiler.products.mast.clearance',
        'clearance_target_m': 'profiler.products.mast.clearance',
        'required_height_m': 'profiler.products.mast.clearance',
        'round_up_mm': 'profiler.products.mast.clearance',
        'TerrainProfile': 'profiler.terrain.profile',
        'cheapest_split': 'profiler.products.mast.split',
        'cheapest_split_m': 'profiler.products.mast.split',
    },
    'profiler.mast_search': {
        'radio_batch': 'profiler.engine.radio',
        'round_up_mm': 'profiler.products.mast.clearance',
    },
    'profiler.mast_split': {
        'bisect_up': 'profiler.products.mast.search',
        'height_grid': 'profiler.products.mast.search',
        'lowest_b_clearance_m': 'profiler.products.mast.clearance',
        'round_up_mm': 'profiler.products.mast.clearance',
    },
    'profiler.mast_result': {
        'json_clean': 'profiler.io.jsonsafe',
        'round_up_mm': 'profiler.products.mast.clearance',
    },
    'profiler.network_analysis': {
        'NetworkSettings': 'profiler.engine.links',
        'link_fields': 'profiler.engine.links',
        'minimum_separation_m': 'profiler.engine.radio',
        'RadioSettings': 'profiler.engine.radio',
        'check_separation': 'profiler.engine.radio',
        'radio_batch': 'profiler.engine.radio',
        'slant_distance_m': 'profiler.engine.radio',
        'resolve_frequency_mhz': 'profiler.lora.bands',
        'wavelength_m': 'profiler.propagation.free_space',
    },
    'profiler.coverage_map': {
        'BANDS': 'profiler.products.coverage.grid',
        'COMPOSITE_BANDS': 'profiler.products.coverage.grid',
        'CoverageGrid': 'profiler.products.coverage.grid',
        'Gateway': 'profiler.products.coverage.grid',
        'MAX_PIXELS': 'profiler.products.coverage.grid',
        'composite': 'profiler.products.coverage.grid',
        'make_grid': 'profiler.products.coverage.grid',
        'pixel_polar': 'profiler.products.coverage.grid',
        'radial_lookup': 'profiler.products.coverage.grid',
        'to_grid': 'profiler.products.coverage.grid',
        'keep_freed_memory': 'profiler.products.coverage.radials',
        'kernel_available': 'profiler.products.coverage.radials',
        'line_of_sight_radials': 'profiler.products.coverage.radials',
        'radial_count': 'profiler.products.coverage.radials',
        'radial_fields': 'profiler.products.coverage.radials',
        'radial_step_m': 'profiler.products.coverage.radials',
        'sample_radials': 'profiler.products.coverage.radials',
    },
    'profiler.coverage_radials': {
        'Gateway': 'profiler.products.coverage.grid',
    },
    'profiler.siting_report': {
        'format_cell': 'profiler.io.report',
        'inert_text': 'profiler.io.report',
        'geojson_position': 'profiler.io.exports',
        'geojson_positions': 'profiler.io.exports',
        'split_at_antimeridian': 'profiler.io.exports',
        'wrap_longitude': 'profiler.io.exports',
        'hearing_matrix': 'profiler.products.siting.setcover',
        'solve_siting': 'profiler.products.siting.setcover',
    },
    'profiler.coverage_io': {
        'coverage_outputs': 'profiler.api',
    },
    'profiler.report': {
        'write_text': 'profiler.io.outputs',
    },
    'profiler.exports': {
        'inert_text': 'profiler.io.report',
        'summary_rows': 'profiler.io.report',
        'verdict': 'profiler.io.report',
        'write_text': 'profiler.io.outputs',
    },
    'profiler.exports_network': {
        'KML_NAMESPACE': 'profiler.io.exports',
        'geojson_positions': 'profiler.io.exports',
        'split_at_antimeridian': 'profiler.io.exports',
        'wrap_longitude': 'profiler.io.exports',
        'geodesic_path': 'profiler.terrain.geodesic',
        'inert_text': 'profiler.io.report',
    },
}
"""Old module -> {name: new module} for names the new module does not hold (former re-exports, split modules)."""


class _OldModule(types.ModuleType):
    """An old module path: attributes come from the new module (or where a former re-export lives now)."""

    def __getattr__(self, name):
        import importlib

        old = self.__name__
        target = importlib.import_module(MOVED[old])
        if hasattr(target, name):
            return getattr(target, name)
        where = NAMES.get(old, {}).get(name)
        if where is None:
            raise AttributeError(f"module {old!r} has no attribute {name!r}")
        warnings.warn(f"{old}.{name} is deprecated and will be removed in the next release; "
                      f"use {where}.{name}", DeprecationWarning, stacklevel=2)
        return getattr(importlib.import_module(where), name)

    def __call__(self, *args, **kwargs):
        # ``import profiler.mast`` binds this module to ``profiler.mast``, the name of an API function:
        # calling it still calls the function.
        from . import api

        leaf = self.__name__.rsplit(".", 1)[1]
        if not hasattr(api, leaf):
            raise TypeError(f"module {self.__name__!r} is not callable")
        return getattr(api, leaf)(*args, **kwargs)

    def __dir__(self):
        import importlib

        return sorted(set(dir(importlib.import_module(MOVED[self.__name__]))) | set(NAMES.get(self.__name__, ())))


class _OldPathFinder:
    """Finds the old module paths (last on ``sys.meta_path``: only names no real module has)."""

    def find_spec(self, fullname, path=None, target=None):
        if fullname not in MOVED:
            return None
        from importlib.machinery import ModuleSpec

        return ModuleSpec(fullname, self)

    def create_module(self, spec):
        return _OldModule(spec.name)

    def exec_module(self, module):
        new = MOVED[module.__name__]
        warnings.warn(f"{module.__name__} is deprecated and will be removed in the next release; "
                      f"import from {new}", DeprecationWarning, stacklevel=2)
        module.__doc__ = f"Deprecated: moved to {new}."


def install() -> None:
    """Put the finder of old module paths first on ``sys.meta_path`` (once).

    First, so that no other finder (an editable install of an older checkout, say) answers an old
    name with a stale module; it answers only the names of :data:`MOVED`, which no module has now.
    """
    if not any(isinstance(f, _OldPathFinder) for f in sys.meta_path):
        sys.meta_path.insert(0, _OldPathFinder())
