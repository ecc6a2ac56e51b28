"""``ohmpick serve``: run the app with uvicorn; loopback unless ``--lan``."""

from __future__ import annotations

import socket
import sys
from pathlib import Path

LAN_WARNING = ("warning: listening on every interface: anyone on this network can open the app "
               "and read saved designs.")


def lan_addresses() -> list[str]:
    """IPv4 addresses of this machine's interfaces (no network traffic, nothing bound)."""
    found: set[str] = set()
    try:
        for info in socket.getaddrinfo(socket.gethostname(), None, socket.AF_INET):
            found.add(info[4][0])
    except OSError:
        pass
    try:
        import fcntl
        import struct

        with socket.socket(socket.AF_INET, socket.SOCK_DGRAM) as s:
            for _, name in socket.if_nameindex():
                try:
                    packed = fcntl.ioctl(s.fileno(), 0x8915, struct.pack("256s", name[:15].encode()))  # SIOCGIFADDR
                    found.add(socket.inet_ntoa(packed[20:24]))
                except OSError:
                    continue
    except (ImportError, OSError):
        pass
    return sorted(a for a in found if not a.startswith("127."))


def _url(host: str, port: int) -> str:
    return f"http://[{host}]:{port}/" if ":" in host else f"http://{host}:{port}/"


def banner(host: str, port: int, lan: bool, data_dir: Path, addresses: list[str]) -> list[str]:
    """The lines ``serve`` prints before it starts listening."""
    lines = []
    if lan:
        lines.append(LAN_WARNING)
        lines += [f"  colleagues can open: {_url(a, port)}" for a in addresses]
        if not addresses:
            lines.append("  (no LAN address found: check the network connection)")
    local = "127.0.0.1" if host in ("0.0.0.0", "127.0.0.1", "::") else host
    lines.append(f"ohmpick on {_url(local, port)} (data in {data_dir})")
    return lines


class ServeError(ValueError):
    pass


def serve(args) -> int:
    import uvicorn

    from app.settings import Settings
    from app.web import create_app

    if not 1 <= args.port <= 65535:
        raise ServeError(f"--port: must be 1 to 65535, got {args.port}")
    settings = Settings.from_env(data_dir=Path(args.data) if args.data else None)
    host = "0.0.0.0" if args.lan else args.host
    app = create_app(settings)
    for problem in app.state.library.problems:
        print(f"ohmpick: part not loaded: {problem}", file=sys.stderr)
    for line in banner(host, args.port, args.lan, settings.data_dir, lan_addresses() if args.lan else []):
        print(line, flush=True)
    uvicorn.run(app, host=host, port=args.port, log_level="warning")
    return 0
