"""How saved inputs come back: the view registry, and the Bench's recompute.

Each page that saves designs registers a :class:`View` under the name its
inputs carry in ``view`` (default ``bench``). Recomputing never raises: a
design whose stored inputs no longer work comes back with a ``problem``.
Parts a design names are copied into it when saved, so it still recomputes
after the part leaves the library.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, replace
from typing import Any, Callable, Optional

from pydantic import ValidationError

from app import bench_view, schemas
from app.errors import InputError
from app.parts import Library, PartNotFound, part_from_mapping
from app.store import designs as store

log = logging.getLogger("ohmpick.designs")


@dataclass(frozen=True)
class View:
    """How one page's saved inputs come back.

    ``recompute(inputs, library) -> result`` validates the raw inputs and
    raises ValidationError / InputError / PartNotFound when they do not work;
    ``kind(inputs, library) -> str`` labels the design in the list;
    ``page(inputs, result, library) -> dict`` builds the read-only page's data
    (headline, facts, tables, figures: see ``app/pages/saved.py``);
    ``open_path`` is the page that opens a copy (``?copy=<id>``).
    """

    recompute: Callable[[dict, Library], dict]
    kind: Callable[[dict, Library], str] = lambda inputs, library: "design"
    page: Optional[Callable[[dict, dict, Library], dict]] = None
    label: str = "Bench"
    open_path: str = "/"


VIEWS: dict[str, View] = {}


def register(name: str, recompute: Optional[Callable] = None, **fields) -> View:
    """Add a view, or change parts of one (``register("bench", page=fn)``)."""
    view = replace(VIEWS[name], **fields) if name in VIEWS else View(recompute=recompute, **fields)
    if recompute is not None:
        view = replace(view, recompute=recompute)
    VIEWS[name] = view
    return view


def bench_page_data(inputs: dict, library: Library) -> dict:
    """What the Bench itself shows for these inputs: its own model and numbers."""
    req = bench_view.BenchIn.model_validate({k: v for k, v in inputs.items() if k != "view"})
    return bench_view.build(req, library)


def bench_result(inputs: dict, library: Library) -> dict:
    """The solve response; for a pot wired as the whole divider (nothing to solve), its metrics."""
    out = bench_page_data(inputs, library)
    if out.get("solve") is not None:
        return out["solve"]
    divider = out["divider"]
    return {"fixed_ohm": None, "exact_ohm": None, "score": None, "objective": inputs.get("objective", "swing"),
            "series": inputs.get("series", "E24"), "metrics": divider["metrics"], "candidates": [],
            "warnings": [n["text"] for n in out.get("notices", []) if n.get("level") == "warn"]}


def bench_kind(inputs: dict, library: Library) -> str:
    sensor = inputs.get("sensor") or {}
    kind = sensor.get("kind")
    if "part" in sensor:
        try:
            kind = library.get(sensor["part"]).kind
        except PartNotFound:
            kind = None
    return bench_view.KIND_LABELS.get(kind, "sensor")


register("bench", bench_result, kind=bench_kind, label="Bench", open_path="/")


# --- parts named by a design: snapshot at save, fallback on read ---------------

def part_ids(value: Any) -> set[str]:
    """Every ``{"part": id}`` reference anywhere in the inputs."""
    if isinstance(value, dict):
        found = {value["part"]} if isinstance(value.get("part"), str) and len(value) == 1 else set()
        for item in value.values():
            found |= part_ids(item)
        return found
    if isinstance(value, list):
        return set().union(*(part_ids(v) for v in value)) if value else set()
    return set()


def snapshot(inputs: dict, library: Library) -> dict[str, dict]:
    out = {}
    for pid in sorted(part_ids(inputs)):
        if pid in library.parts:
            out[pid] = library.parts[pid].to_dict()
    return out


def with_snapshot(library: Library, parts: dict[str, dict]) -> tuple[Library, list[str]]:
    """The library plus saved copies of parts it no longer has (and notes saying so)."""
    missing = {pid: data for pid, data in parts.items() if pid not in library.parts}
    if not missing:
        return library, []
    merged = Library(library.parts, library.problems)
    notes = []
    for pid, data in missing.items():
        fields = {k: data[k] for k in ("name", "notes", "sensor", "tolerances", "dissipation_w_per_k", "fitted")
                  if data.get(k) not in (None, {})}
        try:
            merged.add(part_from_mapping(pid, fields, origin="saved copy"))
            notes.append(f"part {pid!r} is no longer in the library; using the copy saved with this design")
        except InputError:
            continue
    return merged, notes


@dataclass(frozen=True)
class Loaded:
    design: store.Design
    view: Optional[View]
    library: Library
    result: Optional[dict]
    problem: Optional[dict]
    notes: list[str]


def problem_of(err: Exception) -> dict[str, str]:
    """{field, message} of why inputs do not recompute."""
    if isinstance(err, ValidationError):  # a union reports every member; the deepest field is the useful one
        return sorted(schemas.problems_from(err), key=lambda p: -p["field"].count("."))[0]
    if isinstance(err, InputError):
        return {"field": err.field, "message": err.message}
    if isinstance(err, PartNotFound):
        return {"field": "sensor.part", "message": f"no part with id {err.part_id!r} in the library"}
    return {"field": "", "message": "this version of ohmpick could not recompute the design"}


def recompute(design: store.Design, library: Library) -> Loaded:
    """The design with its result, or with the problem that stops it (never raises)."""
    view = VIEWS.get(design.view)
    lib, notes = with_snapshot(library, design.parts)
    if view is None:
        problem = {"field": "view", "message": f"saved by a page ({design.view!r}) this version does not have"}
        return Loaded(design, None, lib, None, problem, notes)
    try:
        return Loaded(design, view, lib, view.recompute(design.inputs, lib), None, notes)
    except (ValidationError, InputError, PartNotFound) as err:
        return Loaded(design, view, lib, None, problem_of(err), notes)
    except Exception:  # a bug must not hide a saved design
        log.exception("recomputing design %s failed", design.id)
        return Loaded(design, view, lib, None, problem_of(RuntimeError()), notes)
