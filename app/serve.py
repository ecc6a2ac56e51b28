"""``ohmpick serve``: run the app with uvicorn; loopback unless ``--lan``."""

from __future__ import annotations

import socket
import sys
from pathlib import Path


def lan_addresses() -> list[str]:
    """IPv4 addresses of this machine's interfaces (no network traffic)."""
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


def serve(args) -> int:
    import uvicorn

    from app.settings import Settings
    from app.web import create_app

    settings = Settings.from_env(data_dir=Path(args.data) if args.data else None)
    host = "0.0.0.0" if args.lan else args.host
    app = create_app(settings)
    for problem in app.state.library.problems:
        print(f"ohmpick: part not loaded: {problem}", file=sys.stderr)
    if args.lan:
        print("warning: listening on every interface: anyone on this network can open the app and read saved designs.")
        for address in lan_addresses() or ["(no LAN address found)"]:
            print(f"  colleagues can open: http://{address}:{args.port}/")
    print(f"ohmpick on http://{'127.0.0.1' if host in ('0.0.0.0', '127.0.0.1') else host}:{args.port}/ (data in {settings.data_dir})")
    uvicorn.run(app, host=host, port=args.port, log_level="warning")
    return 0
