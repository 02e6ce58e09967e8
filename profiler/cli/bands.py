"""``profiler bands``: the frequency-plan table."""

from __future__ import annotations

import json

import click

from ..bands import BANDS, NEAR_FIELD_RULE_OF_THUMB_M, NEAR_FIELD_WAVELENGTHS, wavelength_m
from ..budget import near_field_distance_m


@click.command("bands")
@click.option("--json", "as_json", is_flag=True, help="Print the table as JSON.")
def bands_command(as_json):
    """List the frequency plans, their working frequency, wavelength and near-field distances.

    The working frequency is the mean of the lowest and highest channel.
    Antennas closer than 4 wavelengths (or, as a rule of thumb, 3 m) couple
    in the near field and the far-field results do not apply.
    """
    rows = []
    for b in BANDS.values():
        f = b.frequency_mhz
        rows.append({"band": b.name, "low_mhz": b.low_mhz, "high_mhz": b.high_mhz, "frequency_mhz": f,
                     "wavelength_m": wavelength_m(f),
                     "near_field_4_wavelengths_m": near_field_distance_m(f, NEAR_FIELD_WAVELENGTHS),
                     "rule_of_thumb_m": NEAR_FIELD_RULE_OF_THUMB_M, "description": b.description})
    if as_json:
        click.echo(json.dumps(rows, indent=2))
        return
    click.echo(f"{'band':<7} {'low MHz':>9} {'high MHz':>9} {'freq MHz':>10} {'lambda m':>9} {'4 lambda m':>10} {'rule m':>7}  plan")
    for r in rows:
        click.echo(f"{r['band']:<7} {r['low_mhz']:>9.4f} {r['high_mhz']:>9.4f} {r['frequency_mhz']:>10.4f} "
                   f"{r['wavelength_m']:>9.4f} {r['near_field_4_wavelengths_m']:>10.2f} {r['rule_of_thumb_m']:>7.1f}  {r['description']}")
    click.echo("Keep antennas at least the larger of 4 wavelengths and 3 m apart (common practice).")
