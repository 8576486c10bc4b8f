"""``stillhook modes``: the rig's sway modes at one point, and each mode's band over the envelope."""

from __future__ import annotations

import argparse

from stillhook.cli._common import (
    add_json_argument,
    add_project_argument,
    add_quantity_option,
    format_table,
    load_project_arg,
    print_json,
)

HELP = "sway modes of the hook and payload (frequencies, shapes, participation, bands over the envelope)"

EXAMPLES = """  stillhook modes demo
  stillhook modes --hook-mass-kg 340 --payload-mass-kg 150 --rope-length-m 5 --rigging-length-m 3.1 --json
"""

_RIG_OPTIONS = (("hook_mass_kg", "hook block mass m1 (kg, 1 to 500000)"),
                ("payload_mass_kg", "payload mass m2 (kg, 0 to 2e7)"),
                ("rope_length_m", "hoist rope length L1, trolley to hook (m, 0.1 to 1000)"),
                ("rigging_length_m", "rigging length L2, hook to payload centre of mass (m, 0 to 100)"))


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_project_argument(p, optional=True)
    for name, text in _RIG_OPTIONS:
        add_quantity_option(p, "--" + name.replace("_", "-"), name, text)
    add_quantity_option(p, "--gravity-m-s2", "gravity_m_s2", "gravity (m/s2, default 9.80665)")
    add_quantity_option(p, "--damping-ratio", "damping_ratio", "modal damping ratio (0 to 0.7, default 0)")
    add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from stillhook.errors import ConfigError
    from stillhook.model.rig import DEFAULT_DAMPING_RATIO, STANDARD_GRAVITY_M_S2, Rig

    given = [n for n, _ in _RIG_OPTIONS if getattr(args, n) is not None]
    bands = None
    if args.project is not None:
        if given or args.gravity_m_s2 is not None or args.damping_ratio is not None:
            raise ConfigError("give a project file or rig options (--hook-mass-kg ...), not both")
        project = load_project_arg(args.project)
        env = project.envelope
        rig = env.nominal_rig
        bands = env.mode_bands_hz()
        envelope = env.describe()
    else:
        missing = [n for n, _ in _RIG_OPTIONS if n not in given]
        if missing:
            raise ConfigError("missing " + ", ".join("--" + n.replace("_", "-") for n in missing)
                              + "; give them all, or a project file")
        rig = Rig(args.hook_mass_kg, args.payload_mass_kg, args.rope_length_m, args.rigging_length_m,
                  STANDARD_GRAVITY_M_S2 if args.gravity_m_s2 is None else args.gravity_m_s2,
                  DEFAULT_DAMPING_RATIO if args.damping_ratio is None else args.damping_ratio)
        envelope = None
    modes = rig.modes()
    out = {
        "rig": {"hook_mass_kg": rig.hook_mass_kg, "payload_mass_kg": rig.payload_mass_kg,
                "rope_length_m": rig.rope_length_m, "rigging_length_m": rig.rigging_length_m,
                "gravity_m_s2": rig.gravity_m_s2, "damping_ratio": rig.damping_ratio},
        "modes": [m.as_dict() for m in modes],
    }
    if bands is not None:
        out["envelope"] = envelope
        out["bands"] = [{"mode": i + 1, "frequency_lo_hz": lo, "frequency_hi_hz": hi}
                        for i, (lo, hi) in enumerate(bands)]
    if args.json:
        print_json(out)
        return 0
    where = "nominal point" if bands is not None else "rig"
    print(f"Sway modes at the {where}: hook {rig.hook_mass_kg:g} kg, payload {rig.payload_mass_kg:g} kg, "
          f"rope {rig.rope_length_m:g} m, rigging {rig.rigging_length_m:g} m")
    if bands is not None and env.rope_offset_m != 0.0:
        print(f"(rope here is the pendulum length: encoder rope {env.nominal_rope_length_m:g} m + [rig] rope_offset_m "
              f"{env.rope_offset_m:g} m)")
    rows = [[i + 1, m.frequency_hz, m.period_s, m.omega_rad_s, m.damping_ratio, m.payload_to_hook_ratio,
             m.hook_participation_m_per_m_s2, m.payload_participation_m_per_m_s2] for i, m in enumerate(modes)]
    print(format_table(["mode", "freq Hz", "period s", "omega rad/s", "damping", "x2/x1",
                        "hook m per m/s2", "payload m per m/s2"], rows))
    if bands is not None:
        (L_lo, L_hi), (m_lo, m_hi) = env.rope_length_range_m, env.payload_mass_range_kg
        print(f"\nBands over the envelope (rope {L_lo:g}-{L_hi:g} m, payload {m_lo:g}-{m_hi:g} kg):")
        print(format_table(["mode", "lowest Hz", "highest Hz", "hi/lo"],
                           [[i + 1, lo, hi, hi / lo] for i, (lo, hi) in enumerate(bands)]))
    return 0
