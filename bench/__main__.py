"""``python -m bench [name ...]``: run every bench module, or the ones named."""

from __future__ import annotations

import importlib
import pkgutil
import sys

import bench


def discover() -> list[str]:
    """Names of the modules in bench/ that define ``run()``."""
    found = []
    for info in pkgutil.iter_modules(bench.__path__):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"bench.{info.name}")
        if callable(getattr(module, "run", None)):
            found.append(info.name)
    return sorted(found)


def main(argv: list[str]) -> int:
    available = discover()
    names = argv or available
    unknown = [name for name in names if name not in available]
    if unknown:
        print(f"bench: no bench module named {', '.join(unknown)}; available: {', '.join(available)}", file=sys.stderr)
        return 2
    for name in names:
        print(f"== bench.{name}", flush=True)
        for line in importlib.import_module(f"bench.{name}").run():
            print(line, flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
