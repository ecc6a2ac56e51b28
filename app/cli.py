"""``ohmpick``: the command line. Thin: read a request, call the service, print.

Bad input exits with status 2 and one line naming the field; no traceback.
"""

from __future__ import annotations

import argparse
import json
import sys
from typing import Any, Callable

from pydantic import ValidationError

from app import schemas, service
from app.api import trip as trip_api
from app.errors import InputError
from app.parts import Library, PartNotFound
from app.settings import Settings
from app.units import format_resistance

EXIT_BAD_INPUT = 2


def _fmt(value: Any, spec: str = ".6g") -> str:
    return "—" if value is None else format(value, spec)


def show_evaluate(out: dict) -> str:
    head = f"{'stimulus':>12} {'sensor':>12} {'Vout (V)':>12} {'Rth':>12} {'P sensor (W)':>13} {'dV/ds':>12}"
    rows = [head]
    for s, r, v, th, p, d in zip(out["stimulus"], out["sensor_ohm"], out["vout_v"], out["thevenin_ohm"],
                                 out["sensor_power_w"], out["sensitivity"]):
        rows.append(f"{_fmt(s):>12} {format_resistance(r) if r else '0 Ω':>12} {_fmt(v):>12} "
                    f"{format_resistance(th) if th else '0 Ω':>12} {_fmt(p, '.4g'):>13} {_fmt(d, '.5g'):>12}")
    return "\n".join(rows)


def show_solve(out: dict) -> str:
    m = out["metrics"]
    lines = [
        f"fixed resistor ({out['series']}): {format_resistance(out['fixed_ohm'])}   "
        f"{out['objective']} score {out['score']:.6g}",
        f"exact optimum: {format_resistance(out['exact_ohm'], 5)}",
        f"swing {m['swing_v']:.4g} V, nonlinearity {m['nonlinearity_pct']:.3g} %, "
        f"worst sensitivity {m['min_sensitivity']:.4g} V per axis unit (°C, decade of lux or travel), "
        f"max sensor power {m['max_sensor_power_w']:.3g} W",
        "candidates:",
    ]
    lines += [f"  {format_resistance(c['fixed_ohm']):>10}  {c['score']:.6g}" for c in out["candidates"]]
    lines += [f"warning: {w}" for w in out.get("warnings", [])]
    return "\n".join(lines)


def show_fit(out: dict) -> str:
    lines = [f"{k} = {v}" for k, v in out["sensor"].items()]
    lines.append("residuals: " + ", ".join(_fmt(r, ".3g") for r in out["residuals"]))
    lines.append(f"largest error: {out['max_abs_error']:.3g}")
    return "\n".join(lines)


# name: (request model, service call taking (request, library), readable printer, help)
REQUEST_COMMANDS: dict[str, tuple[type, Callable, Callable[[dict], str], str]] = {
    "evaluate": (schemas.EvaluateIn, service.evaluate, show_evaluate, "output, Thevenin resistance, power and slope"),
    "solve": (schemas.SolveIn, service.solve, show_solve, "choose the fixed resistor"),
    "fit": (schemas.FitIn, lambda req, lib: service.fit(req), show_fit, "fit a sensor model to points"),
    "trip": (trip_api.TripIn, trip_api.solve_trip, trip_api.describe, "comparator trip and release with hysteresis"),
}


class BadInput(Exception):
    pass


def _read_request(path: str, model: type) -> Any:
    try:
        if path == "-":
            text = sys.stdin.read()
        else:
            with open(path, encoding="utf-8") as handle:
                text = handle.read()
    except OSError as err:
        raise BadInput(f"cannot read {path}: {err.strerror}") from None
    try:
        data = json.loads(text)
    except json.JSONDecodeError as err:
        raise BadInput(f"{path}: not valid JSON (line {err.lineno}, column {err.colno}: {err.msg})") from None
    try:
        return model.model_validate(data)
    except ValidationError as err:
        first = schemas.problems_from(err)[0]
        raise BadInput(f"{first['field'] or 'request'}: {first['message']}") from None


def run_request(name: str, path: str, as_json: bool, library: Library) -> str:
    model, call, show, _ = REQUEST_COMMANDS[name]
    request = _read_request(path, model)
    try:
        out = call(request, library)
    except InputError as err:
        raise BadInput(str(err)) from None
    except PartNotFound as err:
        raise BadInput(f"sensor.part: no part with id {err.part_id!r} in the library") from None
    if isinstance(out, str):
        return out
    return json.dumps(out, indent=2, allow_nan=False) if as_json else show(out)


def run_table(args: argparse.Namespace, library: Library) -> str:
    """``ohmpick table``: the table as JSON, CSV or a C header, on standard output or in --out."""
    from pathlib import Path

    from app.table_request import TableIn, compute

    request = _read_request(args.file, TableIn)
    fmt = args.format or request.format
    try:
        computed = compute(request, library)
        text = json.dumps(computed.json(), indent=2, allow_nan=False) + "\n" if fmt == "json" else computed.text(fmt)
    except InputError as err:
        raise BadInput(str(err)) from None
    except PartNotFound as err:
        raise BadInput(f"sensor.part: no part with id {err.part_id!r} in the library") from None
    if not args.out:
        return text.rstrip("\n")
    try:
        Path(args.out).write_text(text, encoding="utf-8")
    except OSError as err:
        raise BadInput(f"cannot write {args.out}: {err.strerror}") from None
    table = computed.table
    return (f"wrote {args.out}: {table.codes.size} entries, codes {table.codes[0]} .. {table.codes[-1]}, largest "
            f"interpolation error {table.max_error:.4g} {computed.tables.design.axis_unit}")


def parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="ohmpick", description="Design sensor voltage dividers.")
    p.add_argument("--parts", help="folder of part TOML files (default: the demo parts)")
    sub = p.add_subparsers(dest="command", required=True)
    for name, (_, _, _, text) in REQUEST_COMMANDS.items():
        c = sub.add_parser(name, help=text, description=f"{text}. FILE is a JSON request body as for POST /api/{name}, or - for standard input.")
        c.add_argument("file", metavar="FILE")
        c.add_argument("--json", action="store_true", help="print the endpoint's JSON")
    t = sub.add_parser("table", help="ADC code to stimulus table for firmware",
                       description="ADC code to stimulus table for firmware. FILE is a JSON request body as for "
                                   "POST /api/table, or - for standard input.")
    t.add_argument("file", metavar="FILE")
    t.add_argument("--format", choices=("json", "csv", "c"), help="json, csv or c (a C99 header); default: the file's format, else json")
    t.add_argument("--out", metavar="PATH", help="write the table to PATH instead of standard output")
    s = sub.add_parser("serve", help="start the web app")
    s.add_argument("--host", default="127.0.0.1")
    s.add_argument("--port", type=int, default=8000)
    s.add_argument("--lan", action="store_true", help="listen on all interfaces so colleagues can open it")
    s.add_argument("--data", help="data folder for saved designs (default: per-user folder or $OHMPICK_DATA)")
    return p


def main(argv: list[str] | None = None) -> int:
    args = parser().parse_args(argv)
    try:
        if args.command == "serve":
            from app.serve import ServeError, serve

            try:
                return serve(args)
            except ServeError as err:
                raise BadInput(str(err)) from None
        settings = Settings.from_env(parts_dir=args.parts)
        library = Library.load(settings.parts_dir)
        if args.command == "table":
            print(run_table(args, library))
            return 0
        print(run_request(args.command, args.file, args.json, library))
        return 0
    except BadInput as err:
        print(f"ohmpick: {err}", file=sys.stderr)
        return EXIT_BAD_INPUT


if __name__ == "__main__":
    sys.exit(main())
