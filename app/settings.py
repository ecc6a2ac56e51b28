"""Settings in one table: name, default, environment variable, help.

Read once at start-up; ``ohmpick serve`` flags override the environment.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

from app.parts import PARTS_DIR


def default_data_dir() -> Path:
    """Per-user data folder: $XDG_DATA_HOME/ohmpick, else ~/.local/share/ohmpick."""
    base = os.environ.get("XDG_DATA_HOME") or str(Path.home() / ".local" / "share")
    return Path(base) / "ohmpick"


# name: (environment variable, help)
SETTINGS = {
    "data_dir": ("OHMPICK_DATA", "Folder for the SQLite store of saved designs and user parts"),
    "parts_dir": ("OHMPICK_PARTS", "Folder of part TOML files loaded as the library"),
    "max_body_bytes": ("OHMPICK_MAX_BODY", "Largest request body accepted, in bytes"),
    "saves_per_minute": ("OHMPICK_SAVES_PER_MINUTE", "Designs and parts one client address may save per minute"),
}


@dataclass(frozen=True)
class Settings:
    data_dir: Path = field(default_factory=default_data_dir)
    parts_dir: Path = PARTS_DIR
    max_body_bytes: int = 1_000_000
    saves_per_minute: int = 120

    @classmethod
    def from_env(cls, **overrides) -> "Settings":
        values: dict = {}
        env = os.environ
        if env.get("OHMPICK_DATA"):
            values["data_dir"] = Path(env["OHMPICK_DATA"])
        if env.get("OHMPICK_PARTS"):
            values["parts_dir"] = Path(env["OHMPICK_PARTS"])
        for name in ("max_body_bytes", "saves_per_minute"):
            text = env.get(SETTINGS[name][0])
            if text:
                try:
                    values[name] = int(text)
                except ValueError:
                    raise SystemExit(f"ohmpick: {SETTINGS[name][0]} must be a whole number, got {text!r}") from None
        values.update({k: v for k, v in overrides.items() if v is not None})
        return cls(**values)
