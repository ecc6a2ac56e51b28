"""A per-client sliding-window limit (saves of designs and parts from one address).

In memory and per process: it stops a runaway script or a careless loop on
the LAN from filling the disk, not a determined attacker.
"""

from __future__ import annotations

import threading
import time
from collections import defaultdict, deque


class SlidingWindow:
    def __init__(self, limit: int, seconds: float = 60.0, clock=time.monotonic):
        self.limit = limit
        self.seconds = seconds
        self.clock = clock
        self._hits: dict[str, deque] = defaultdict(deque)
        self._lock = threading.Lock()

    def allow(self, key: str) -> tuple[bool, int]:
        """(allowed, seconds to wait when not): counts the hit only when allowed."""
        now = self.clock()
        with self._lock:
            hits = self._hits[key]
            while hits and hits[0] <= now - self.seconds:
                hits.popleft()
            if len(hits) >= self.limit:
                return False, max(1, int(hits[0] + self.seconds - now + 0.999))
            hits.append(now)
            if len(self._hits) > 10_000:  # forget idle clients
                for other in [k for k, v in self._hits.items() if not v]:
                    del self._hits[other]
            return True, 0
