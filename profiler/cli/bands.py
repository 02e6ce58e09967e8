"""``profiler bands [NAME]``: the frequency plans, or one plan in full."""

from __future__ import annotations

import json

import click

from ..lora.bands import BANDS
from ..propagation.free_space import (
    NEAR_FIELD_RULE_OF_THUMB_M,
    NEAR_FIELD_WAVELENGTHS,
    near_field_distance_m,
    wavelength_m,
)


def _summary_rows():
    from ..lora.regional import PLANS

    rows = []
    for b in BANDS.values():
        p = PLANS[b.name]
        f = b.frequency_mhz
        rows.append({"band": b.name, "low_mhz": b.low_mhz, "high_mhz": b.high_mhz, "frequency_mhz": f,
                     "uplink_frequency_mhz": p.uplink_frequency_mhz,
                     "downlink_frequency_mhz": p.downlink_frequency_mhz,
                     "wavelength_m": wavelength_m(f),
                     "near_field_4_wavelengths_m": near_field_distance_m(f, NEAR_FIELD_WAVELENGTHS),
                     "rule_of_thumb_m": NEAR_FIELD_RULE_OF_THUMB_M,
                     "uplink_drs": [f"DR{d}" for d in p.uplink_drs],
                     "max_eirp_dbm": p.max_eirp_dbm, "dwell_time_ms": p.dwell_time_ms,
                     "duty_cycle": p.duty_cycle_subbands is not None,
                     "description": b.description, "section": p.section})
    return rows


def _plan_text(d: dict) -> str:
    lines = [f"{d['band']}: {d['section']}",
             f"  uplink        {d['uplink_channels_mhz'][0]:.4f}-{d['uplink_channels_mhz'][1]:.4f} MHz "
             f"({d['uplink_channel_count']} channels), working frequency {d['uplink_frequency_mhz']:.4f} MHz",
             f"  downlink RX1  {d['rx1']['rule']}; working frequency {d['downlink_frequency_mhz']:.4f} MHz",
             f"  downlink RX2  {d['rx2']['frequency_mhz']:.4f} MHz at DR{d['rx2']['dr']}"]
    power = f"max EIRP {d['max_eirp_dbm']:g} dBm"
    if d["max_conducted_dbm"] is not None:
        power += (f" ({d['max_conducted_dbm']:g} dBm conducted with up to {d['max_antenna_gain_dbi']:g} dBi; "
                  "reduced by any excess gain)")
    lines.append(f"  power         {power}")
    if d["dwell_time_ms"] is None:
        lines.append("  dwell time    none")
    else:
        when = "always" if not d["dwell_time_optional"] else ("on by default; --dwell-time off to drop"
                                                               if d["dwell_time_default"] else "off by default")
        lines.append(f"  dwell time    {d['dwell_time_ms']:g} ms per uplink ({when})")
    if d["duty_cycle_subbands"] is None:
        lines.append("  duty cycle    none in the plan")
    else:
        parts = [f"{s['low_mhz']:g}-{s['high_mhz']:g} MHz {100 * s['duty_cycle']:g} %"
                 for s in d["duty_cycle_subbands"]]
        lines.append(f"  duty cycle    {'; '.join(parts)}")
    for label, key in (("uplink DRs", "uplink_drs"), ("downlink DRs", "downlink_drs")):
        lines.append(f"  {label:<13} DR   SF   BW kHz  max app payload [bytes]")
        for r in d[key]:
            dwell = (f" ({r['max_app_payload_dwell_bytes']} with dwell time)"
                     if key == "uplink_drs" and d["dwell_time_optional"] else "")
            if key == "uplink_drs" and d["dwell_time_optional"] and r["max_app_payload_dwell_bytes"] is None:
                dwell = " (not allowed with dwell time)"
            lines.append(f"                {r['dr']:>2}  {r['sf']:>3}  {r['bw_khz']:>7}  "
                         f"{r['max_app_payload_bytes']}{dwell}")
    for note in d["notes"]:
        lines.append(f"  note          {note}")
    return "\n".join(lines)


@click.command("bands")
@click.argument("name", required=False)
@click.option("--json", "as_json", is_flag=True, help="Print as JSON.")
def bands_command(name, as_json):
    """List the frequency plans, or print plan NAME in full (data rates, channels, limits).

    The working (uplink) frequency is the mean of the lowest and highest
    uplink channel.  Antennas closer than 4 wavelengths (or, as a rule of
    thumb, 3 m) couple in the near field and the far-field results do not
    apply.  Tables: LoRaWAN Regional Parameters RP002-1.0.4.
    """
    if name is not None:
        from ..lora.regional import plan, plan_dict

        d = plan_dict(plan(name))
        click.echo(json.dumps(d, indent=2) if as_json else _plan_text(d))
        return
    rows = _summary_rows()
    if as_json:
        click.echo(json.dumps(rows, indent=2))
        return
    click.echo(f"{'band':<7} {'low MHz':>9} {'high MHz':>9} {'uplink MHz':>10} {'lambda m':>9} {'4 lambda m':>10} "
               f"{'rule m':>7} {'EIRP dBm':>8} {'dwell':>6}  uplink DRs")
    for r in rows:
        dwell = f"{r['dwell_time_ms']:g}ms" if r["dwell_time_ms"] else "-"
        click.echo(f"{r['band']:<7} {r['low_mhz']:>9.4f} {r['high_mhz']:>9.4f} {r['frequency_mhz']:>10.4f} "
                   f"{r['wavelength_m']:>9.4f} {r['near_field_4_wavelengths_m']:>10.2f} {r['rule_of_thumb_m']:>7.1f} "
                   f"{r['max_eirp_dbm']:>8g} {dwell:>6}  {r['uplink_drs'][0]}-{r['uplink_drs'][-1]}")
    click.echo("Keep antennas at least the larger of 4 wavelengths and 3 m apart (common practice). "
               "'profiler bands NAME' prints one plan in full.")
