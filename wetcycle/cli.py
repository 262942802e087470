"""The ``wetcycle`` command.

Every user mistake (unknown name, value out of range, bad file) is a
:class:`~wetcycle.errors.WetcycleError`; it is printed as one line on stderr
and the command exits with status 2.  A traceback means a bug.
"""

from __future__ import annotations

import argparse
import json
import math
import sys

from . import __version__
from .errors import WetcycleError

CAUTION = ("Model estimates with stated uncertainties, not evidence of liquid water or life; "
           "planetary-protection decisions belong to the official policy and its review bodies.")


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors as one line and exit status 2."""

    def error(self, message):
        self.exit(2, f"{self.prog}: error: {message}\n")


def _fmt(x, spec, missing="—"):
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return missing
    return format(x, spec)


def _safe(fn, *args):
    try:
        return fn(*args)
    except WetcycleError:
        return None


def cmd_salts(args):
    from . import salts

    values = []
    for name in salts.names():
        s = salts.load(name)
        eut = s.eutectic()
        values.append((
            s.name,
            eut and float(eut["temperature_K"]),
            eut and float(eut["molality"]),
            _safe(s.deliquescence_rh, 298.15),
            _safe(s.deliquescence_rh, 273.15),
            _safe(s.stable_solid, 273.15) or None,
        ))
    if args.json:
        keys = ("system", "eutectic_temperature_K", "eutectic_molality", "drh_298K", "drh_273K", "stable_solid_273K")
        clean = lambda v: None if isinstance(v, float) and v != v else v
        print(json.dumps([{k: clean(v) for k, v in zip(keys, r)} for r in values], ensure_ascii=False, indent=1))
        return 0
    rows = [(n, _fmt(t, ".1f"), _fmt(m, ".2f"), _fmt(d1, ".3f"), _fmt(d2, ".3f"), st or "—")
            for n, t, m, d1, d2, st in values]
    head = ("system", "eutectic T [K]", "eutectic m [mol/kg]", "DRH 298.15 K", "DRH 273.15 K", "stable solid 273.15 K")
    _print_table(head, rows)
    print("DRH: deliquescence relative humidity (fraction, liquid-water reference) of the stable solid.")
    return 0


def _print_table(head, rows):
    widths = [max([len(str(h))] + [len(str(r[i])) for r in rows]) for i, h in enumerate(head)]
    print("  ".join(str(h).ljust(w) for h, w in zip(head, widths)))
    print("  ".join("-" * w for w in widths))
    for r in rows:
        print("  ".join(str(c).ljust(w) for c, w in zip(r, widths)))


def cmd_salt(args):
    from . import salts

    s = salts.load(args.name)
    info = s.describe(args.at or [])
    if args.json:
        print(json.dumps(info, ensure_ascii=False, indent=1))
        return 0
    print(f"{s.name}  ({s.cation} / {s.anion}); valid {s.T_min:g}-{s.T_max:g} K, up to {s.m_max:g} mol/kg")
    print(f"solids: {', '.join(info['solids'])}")
    e = info["eutectic"]
    if e:
        print(f"eutectic: {e['temperature_K']:.2f} K, {e['molality']:.3f} mol/kg, {' + '.join(e['solids'])}")
    for p in info["peritectics"]:
        print(f"peritectic: {p['temperature_K']:.2f} K, {p['molality']:.3f} mol/kg, {' / '.join(p['solids'])}")
    for me in info["metastable_eutectics"]:
        print(f"metastable eutectic: {me['temperature_K']:.2f} K, {me['molality']:.3f} mol/kg, {' + '.join(me['solids'])}")
    floor = info["model_supercooling_floor_K"]
    note = (f" (the model follows brine down to {floor:.1f} K, its validity limit)"
            if floor is not None and floor != info["supercooling_limit_K"] else "")
    erh = info["efflorescence_rh"]
    erh_text = "none observed" if erh == 0 else _fmt(erh, ".2f")
    print(f"efflorescence RH: {erh_text};  supercooling limit: {_fmt(info['supercooling_limit_K'], '.1f')} K{note}")
    if info["supersaturated_molality_max"] > s.m_max:
        print(f"supersaturated brine followed to {info['supersaturated_molality_max']:g} mol/kg "
              f"(published data to {info['supersaturated_molality_validated']:g}; beyond: extrapolated)")
    print(f"ice nucleates in brine at RH over ice {_fmt(info['ice_nucleation_rh_ice'], '.2f')}"
          + (f"; deliquescence seen down to {info['metastable_deliquescence_depth_K']:g} K below the eutectic"
             if info["metastable_deliquescence_depth_K"] else "")
          + (f"; solid hydrates change with a time constant of {info['hydrate_time_constant_days']:g} d "
             f"at {info['hydrate_reference_temperature_K']:g} K" if info["hydrate_time_constant_days"] else ""))
    if info["at"]:
        head = ("T [K]", "stable solid", "m_sat [mol/kg]", "DRH", "a_w,ice", "m_ice [mol/kg]", "hydration RH")
        rows = []
        for a in info["at"]:
            hyd = "; ".join(f"{h['lower']}→{h['higher']} {_fmt(h['rh'], '.3f')}"
                            + (" (above DRH: via brine)" if h["solid_state"] is False else "")
                            for h in a["hydrate_transitions"]) or "—"
            rows.append((f"{a['temperature_K']:.2f}" + (" *" if a["below_eutectic"] else ""), a["stable_solid"] or "—",
                         _fmt(a["saturation_molality"], ".3f"), _fmt(a["deliquescence_rh"], ".3f"),
                         _fmt(a["ice_water_activity"], ".4f"), _fmt(a["ice_liquidus_molality"], ".3f"), hyd))
        print()
        _print_table(head, rows)
        if any(a["below_eutectic"] for a in info["at"]):
            print("* below the eutectic: brine values are metastable (supercooled).")
    return 0


DEMO_SCENARIO = "runs/demo.toml"


def _demo_path():
    """The demo scenario: runs/demo.toml of a checkout when run from its top, else the packaged copy."""
    from importlib.resources import files
    from pathlib import Path
    here = Path.cwd() / DEMO_SCENARIO
    if here.is_file():
        return here, None
    packaged = Path(str(files("wetcycle.demo") / "demo.toml"))
    return packaged, Path.cwd() / "wetcycle-demo" / "demo.nc"


def cmd_run(args):
    from .config import load_scenario
    from .output import check_output_path, summary_text

    sc = load_scenario(args.scenario)
    out = check_output_path(args.output or sc.output_path, "--output" if args.output else "output",
                            allow_zarr=sc["grid"] is not None)
    if sc["grid"] is None and getattr(args, "workers", 1) not in (None, 1):
        print(f"note: --workers {args.workers} is ignored: {sc.source} is a site scenario (runs in one process)")
    if sc["grid"] is not None:
        from .grid import grid_summary_text, run_grid
        ds = run_grid(sc, workers=getattr(args, "workers", 1), progress=not args.quiet, output_path=out,
                      fresh=getattr(args, "fresh", False), scheduler=getattr(args, "scheduler", None))
        print(grid_summary_text(ds))
    else:
        from .runner import run
        ds = run(sc, progress=not args.quiet, output_path=out)
        print(summary_text(ds))
    print(f"result written to {out}")
    return 0


def cmd_demo(args):
    """The built-in demo: the demo scenario (invented site), then its table."""
    path, output = _demo_path()
    print(f"wetcycle demo: {path.name}, one Mars year at an invented high-latitude site\n")
    return cmd_run(argparse.Namespace(scenario=path, output=output, quiet=args.quiet, workers=1, fresh=False))


def cmd_schema(args):
    from .config import json_schema
    print(json.dumps(json_schema(), indent=1))
    return 0


def cmd_summary(args):
    from .output import open_result, summary_text

    ds = open_result(args.result)
    if "lat" in ds.dims:
        from .grid import grid_summary_text
        print(grid_summary_text(ds))
    else:
        print(summary_text(ds))
    return 0


def cmd_map(args):
    from .maps import plot_map
    from .output import open_result

    path = plot_map(open_result(args.result), args.output, salts=args.salt or None, stat=args.stat,
                    shared_scale=args.shared_scale)
    print(f"figure written to {path}")
    return 0


def cmd_plot(args):
    from .output import open_result
    from .plots import plot_result

    ds = open_result(args.result)
    path = plot_result(ds, args.output, sols=tuple(args.sols) if args.sols else None,
                       salts=args.salt or None)
    print(f"figure written to {path}")
    return 0


def cmd_diagram(args):
    from .plots import plot_diagram

    traj = None
    if args.trajectory:
        from .output import open_result
        traj = open_result(args.trajectory)
    path = plot_diagram(args.name, args.output, trajectory=traj)
    print(f"figure written to {path}")
    return 0


def _brine_paths(args, kind):
    from pathlib import Path

    from .output import check_output_path
    src = Path(args.file)
    data = check_output_path(args.output or src.with_name(f"{src.stem}_{kind}.nc"), "--output" if args.output else "output")
    fig = Path(args.figure) if args.figure else data.with_suffix(".png")
    from .brines.figure import _FORMATS
    from .errors import ConfigError
    if fig.suffix.lower().lstrip(".") not in _FORMATS:
        raise ConfigError(f"--figure: {str(fig)!r} has suffix {fig.suffix!r}; allowed: "
                          f"{', '.join('.' + f for f in _FORMATS)}")
    check_output_path(fig, "--figure")
    return data, fig


def _brine_settings(args, recipe, kind):
    opts = dict(recipe[kind])
    if args.mode:
        opts["mode"] = args.mode
    if args.exclude:
        opts["exclude"] = tuple(opts.get("exclude", ())) + tuple(args.exclude)
    if args.extrapolate_binaries:
        opts["extrapolate_binaries"] = True
    if args.mixing:
        opts["mixing"] = args.mixing
    if args.co2_pressure is not None:
        from .brines.paths import check_co2_pressure
        opts["co2_pressure_Pa"] = check_co2_pressure(args.co2_pressure, "--co2-pressure")
    return opts


def _brine_report(ds, kind):
    if kind == "freeze":
        head = ("solid", "mineral", "first at [K]", "[°C]", "exhausted", "enriched", "branch after the divide")
        rows = [(str(ds.event_solid.values[k]), str(ds.mineral.sel(solid=ds.event_solid.values[k]).values),
                 f"{float(ds.event_at[k]):.2f}", f"{float(ds.event_at[k]) - 273.15:.2f}",
                 ds.event_exhausted_ion.values[k] or "—", ds.event_enriched_ion.values[k] or "—",
                 ds.event_branch.values[k] or "—") for k in range(ds.sizes["event"])]
    else:
        head = ("solid", "mineral", "concentration factor", "water removed", "exhausted", "enriched",
                "branch after the divide")
        rows = [(str(ds.event_solid.values[k]), str(ds.mineral.sel(solid=ds.event_solid.values[k]).values),
                 f"{1.0 / (1.0 - float(ds.event_at[k])):.3g}", f"{float(ds.event_at[k]):.4f}",
                 ds.event_exhausted_ion.values[k] or "—", ds.event_enriched_ion.values[k] or "—",
                 ds.event_branch.values[k] or "—") for k in range(ds.sizes["event"])]
    rows = [tuple(c if c else "—" for c in r) for r in rows]
    print("Mineral sequence (first appearance; chemical divide after Hardie & Eugster 1970):")
    _print_table(head, rows)
    a = ds.attrs
    if kind == "freeze":
        if a["eutectic_temperature_K"] == a["eutectic_temperature_K"]:
            print(f"eutectic: {a['eutectic_temperature_K']:.2f} K ({a['eutectic_temperature_K'] - 273.15:.2f} °C), "
                  f"solids: {a['eutectic_solids']}")
        else:
            print("eutectic: not reached")
    else:
        if a["dry_water_removed"] == a["dry_water_removed"]:
            print(f"dry at water removed {a['dry_water_removed']:.5f} (concentration factor "
                  f"{1.0 / (1.0 - a['dry_water_removed']):.4g}); last brine water activity "
                  f"{a['dry_water_activity']:.3f}; solids: {a['dry_solids']}")
        else:
            print("the brine keeps a saturated liquid to the end of the path (last brine water activity "
                  f"{a['last_brine_water_activity']:.3f})")
    if "pH" in ds:
        import numpy as np
        ph = ds["pH"].values
        ok = np.isfinite(ph)
        if ok.any():
            system = (f"open, CO2 pressure {a['co2_pressure_Pa']:g} Pa" if a.get("carbonate_system") == "open"
                      else "closed")
            print(f"pH (Pitzer scale; carbonate system {system}): {ph[ok][0]:.2f} at the start, "
                  f"{ph[ok][-1]:.2f} in the last brine")
    print(f"path ended: {a['stopped_by']}")
    if a.get("binaries_extrapolated"):
        print(f"binaries extrapolated below their validity (flagged steps): {a['binaries_extrapolated']}")
    if a.get("solids_not_considered"):
        print(f"solids left out for want of ln K data at these temperatures: {a['solids_not_considered']}")
    if a.get("charge_imbalance_removed"):
        print(f"charge imbalance {100 * a['charge_imbalance_removed']:+.2f} % removed by scaling cations and anions")


def cmd_brine(args):
    from . import brines
    from .brines import recipe
    from .brines.figure import path_figure, save_figure
    from .output import write_result

    r = recipe.read(args.file)
    kind = args.brine_command
    data, fig = _brine_paths(args, kind)
    opts = _brine_settings(args, r, kind)
    if kind == "freeze":
        ds = brines.freeze(r["composition"], **opts)
    else:
        if "temperature_K" not in opts and args.temperature is None:
            from .errors import ConfigError
            raise ConfigError(f"evaporate.temperature_K: missing in {args.file}; allowed: a temperature [K] "
                              "(or --temperature)")
        if args.temperature is not None:
            opts["temperature_K"] = args.temperature
        ds = brines.evaporate(r["composition"], **opts)
    ds.attrs["title_name"] = r["name"]
    ds.attrs["composition_file"] = r["source"]
    print(f"{r['name']}: {kind} path, {ds.attrs['composition']}")
    _brine_report(ds, kind)
    write_result(ds, data)
    save_figure(path_figure(ds), fig)
    print(f"dataset written to {data}")
    print(f"figure written to {fig}")
    print("Caution: " + CAUTION)
    return 0


def build_parser():
    p = _Parser(prog="wetcycle", description="Salts and brines at the surface of present-day Mars "
                "and cold, dry analog sites.", epilog=CAUTION)
    p.add_argument("--version", action="version", version=f"wetcycle {__version__}")
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)

    ps = sub.add_parser("salts", help="table of every salt-water system",
                        description="Table of every salt-water system: eutectic, DRH at 298.15 K and 273.15 K, "
                        "stable solid at 273.15 K.")
    ps.add_argument("--json", action="store_true", help="print JSON instead of a table")
    ps.set_defaults(func=cmd_salts)

    p1 = sub.add_parser("salt", help="describe one salt-water system",
                        description="Solids, eutectic, peritectics and, at each --at temperature, the stable "
                        "solid, saturation molality, DRH, ice water activity, ice liquidus and hydration RH.")
    p1.add_argument("name", help="system name, e.g. NaCl, CaCl2, 'Mg(ClO4)2' (case ignored)")
    p1.add_argument("--at", type=float, nargs="+", metavar="T_K", help="temperatures [K] to evaluate at")
    p1.add_argument("--json", action="store_true", help="print one JSON object")
    p1.set_defaults(func=cmd_salt)

    pr = sub.add_parser("run", help="run a scenario and print its table",
                        description="Run a scenario (TOML) and write its NetCDF result; print liquid hours, "
                        "longest spell and habitable hours per salt.")
    pr.add_argument("scenario", help="scenario TOML file (see runs/demo.toml)")
    pr.add_argument("-o", "--output", help="result path (default: the scenario's output); gridded runs: "
                    "a path ending in .zarr writes a zarr store")
    pr.add_argument("-q", "--quiet", action="store_true", help="no progress bar")
    pr.add_argument("--workers", type=int, default=1, metavar="N",
                    help="gridded runs: N > 1 starts a local dask cluster of N worker processes "
                    "(default 1: in this process)")
    pr.add_argument("--scheduler", metavar="ADDRESS",
                    help="gridded runs: join the dask scheduler at ADDRESS (tcp://host:8786)")
    pr.add_argument("--fresh", action="store_true",
                    help="gridded runs: discard finished chunks of an earlier run and start over")
    pr.set_defaults(func=cmd_run)

    pd = sub.add_parser("demo", help="run the built-in demo scenario",
                        description=f"Run the demo scenario (an invented site): {DEMO_SCENARIO} from the top "
                        "of a checkout, elsewhere the copy shipped in the package (result in ./wetcycle-demo/).")
    pd.add_argument("-q", "--quiet", action="store_true", help="no progress bar")
    pd.set_defaults(func=cmd_demo)

    psc = sub.add_parser("schema", help="print the scenario schema as JSON Schema (for editors)",
                         description="Print the scenario file's schema as a JSON Schema (draft 2020-12), "
                         "for editors that check TOML against a schema.")
    psc.set_defaults(func=cmd_schema)

    pm = sub.add_parser("summary", help="the table of a result file",
                        description="Print the per-salt table of a result file.")
    pm.add_argument("result", help="NetCDF result written by wetcycle run")
    pm.set_defaults(func=cmd_summary)

    pp = sub.add_parser("plot", help="figure of a result: T, RH, states, liquid hours by Ls",
                        description="Multi-panel figure of temperature, humidity and the state of each salt "
                        "over chosen sols, and liquid hours by Ls.")
    pp.add_argument("result", help="NetCDF result")
    pp.add_argument("-o", "--output", required=True, help="figure path (PNG, PDF, SVG)")
    pp.add_argument("--sols", type=int, nargs=2, metavar=("FIRST", "LAST"), help="sols to show")
    pp.add_argument("--salt", action="append", help="salt to show (repeatable; default all)")
    pp.set_defaults(func=cmd_plot)

    pmap = sub.add_parser("map", help="map of a statistic from a gridded result",
                          description="Map of a per-cell statistic of a gridded result, one panel per salt.")
    pmap.add_argument("result", help="NetCDF result of a gridded run")
    pmap.add_argument("-o", "--output", required=True, help="figure path (PNG, PDF, SVG)")
    pmap.add_argument("--salt", action="append", help="salt to map (repeatable; default all)")
    pmap.add_argument("--stat", default="liquid_hours_per_year", help="statistic (default liquid_hours_per_year)")
    pmap.add_argument("--shared-scale", action="store_true",
                      help="one colour scale for every salt (default: each salt its own)")
    pmap.set_defaults(func=cmd_map)

    pg = sub.add_parser("diagram", help="temperature-RH phase diagram of a salt system",
                        description="Phase diagram of one salt-water system in temperature and relative "
                        "humidity, optionally with a run's forcing trajectory.")
    pg.add_argument("name", help="salt system, e.g. NaCl, 'Mg(ClO4)2'")
    pg.add_argument("--trajectory", help="result file whose series to draw on the diagram")
    pg.add_argument("-o", "--output", required=True, help="figure path")
    pg.set_defaults(func=cmd_diagram)

    pb = sub.add_parser("brine", help="freezing and evaporation paths of a mixed brine",
                        description="Mixed-salt brines: equilibrium (or fractional) freezing and evaporation "
                        "paths of a composition file (TOML: a [composition] table of ion = mol/kg water).")
    bsub = pb.add_subparsers(dest="brine_command", required=True, parser_class=_Parser)
    for kind, text in (("freeze", "cool at fixed water down to the mixture's eutectic"),
                       ("evaporate", "remove water at fixed temperature until the brine dries")):
        q = bsub.add_parser(kind, help=text, description=f"{text[0].upper()}{text[1:]}; print the mineral sequence "
                            "with its chemical divides and write the dataset (NetCDF) and a figure.")
        q.add_argument("file", help="composition file (TOML), e.g. examples/brines/pond.toml")
        q.add_argument("-o", "--output", help="NetCDF path (default: FILE's stem + _%s.nc beside it)" % kind)
        q.add_argument("--figure", help="figure path, .png/.pdf/.svg (default: the dataset path with .png)")
        q.add_argument("--mode", choices=("equilibrium", "fractional"), help="override the file's mode")
        q.add_argument("--exclude", action="append", metavar="SOLID",
                       help="leave a solid out (metastable path); repeatable")
        q.add_argument("--extrapolate-binaries", action="store_true",
                       help="continue below binary systems' validity with flagged steps (default: stop there)")
        q.add_argument("--mixing", choices=("fitted", "start", "none"),
                       help="mixing parameters: fitted (default), recalled 25 °C start values, or none (baseline)")
        q.add_argument("--co2-pressure", type=float, metavar="PA",
                       help="fixed CO2 pressure [Pa]: open carbonate system (overrides the file; default closed)")
        if kind == "evaporate":
            q.add_argument("--temperature", type=float, metavar="T_K", help="temperature [K] (overrides the file)")
        q.set_defaults(func=cmd_brine)
    return p


class Terminated(BaseException):
    """SIGTERM, raised in the main thread so that every clean-up (temporary files, workers) runs."""


def _on_sigterm(signum, frame):
    raise Terminated()


def main(argv=None):
    """Run the command; exit status 0, 2 for a user mistake, 130 for Ctrl-C, 143 for SIGTERM."""
    import signal
    import threading

    parser = build_parser()
    args = parser.parse_args(argv)
    old = None
    if threading.current_thread() is threading.main_thread():
        old = signal.signal(signal.SIGTERM, _on_sigterm)
    try:
        return args.func(args)
    except WetcycleError as exc:
        print(f"wetcycle: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("wetcycle: interrupted (a gridded run keeps its finished tiles: the same command resumes)",
              file=sys.stderr)
        return 130
    except Terminated:
        print("wetcycle: terminated (a gridded run keeps its finished tiles: the same command resumes)",
              file=sys.stderr)
        return 143
    except BrokenPipeError:
        return 0
    finally:
        if old is not None:
            signal.signal(signal.SIGTERM, old)


if __name__ == "__main__":
    sys.exit(main())
