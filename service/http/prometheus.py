"""Metrics in the Prometheus text exposition format (version 0.0.4).

Request counts and durations are this process's own (each API server is scraped on its
own); queue depth, running runs, folds computed and finished runs by status (failures
among them) are read from the store, so every server reports the same values for them.
"""

from __future__ import annotations

import threading
import time
from collections import Counter, defaultdict
from collections.abc import Iterable, Mapping

from starlette.types import ASGIApp, Message, Receive, Scope, Send

CONTENT_TYPE = "text/plain; version=0.0.4; charset=utf-8"
UNMATCHED = "(unmatched)"


class RequestMetrics:
    """Counts and total seconds of answered requests by method, route template and status."""

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self.counts: Counter[tuple[str, str, str]] = Counter()
        self.seconds: defaultdict[tuple[str, str, str], float] = defaultdict(float)

    def observe(self, method: str, route: str, status: int, seconds: float) -> None:
        key = (method, route, str(status))
        with self._lock:
            self.counts[key] += 1
            self.seconds[key] += seconds

    def exposition(self) -> list[str]:
        """The request metrics' lines."""
        with self._lock:
            counts, seconds = dict(self.counts), dict(self.seconds)
        names = ("method", "route", "status")
        return [
            *family("foldline_http_requests_total", "counter",
                    "HTTP requests answered, by method, route template and status",
                    [(dict(zip(names, key)), value) for key, value in sorted(counts.items())]),
            *family("foldline_http_request_seconds_total", "counter",
                    "Seconds spent answering HTTP requests, by method, route and status",
                    [(dict(zip(names, key)), value) for key, value in sorted(seconds.items())]),
        ]


class MetricsMiddleware:
    """Pure ASGI middleware feeding :class:`RequestMetrics` (outermost, so errors count too)."""

    def __init__(self, app: ASGIApp, metrics: RequestMetrics) -> None:
        self.app = app
        self.metrics = metrics

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        started, status = time.perf_counter(), 500

        async def record_status(message: Message) -> None:
            nonlocal status
            if message["type"] == "http.response.start":
                status = message["status"]
            await send(message)

        try:
            await self.app(scope, receive, record_status)
        finally:
            route = scope.get("route")
            self.metrics.observe(scope["method"], getattr(route, "path", UNMATCHED), status,
                                 time.perf_counter() - started)


def store_exposition(run_counts: Mapping[str, int], folds: int) -> list[str]:
    """The lines of the metrics read from the store."""
    return [
        *family("foldline_runs_queued", "gauge", "Runs waiting for a worker",
                [({}, run_counts["queued"])]),
        *family("foldline_runs_running", "gauge", "Runs a worker is computing",
                [({}, run_counts["running"])]),
        *family("foldline_runs_finished_total", "counter", "Runs finished, by final status",
                [({"status": s}, run_counts[s]) for s in ("succeeded", "failed", "cancelled")]),
        *family("foldline_folds_computed_total", "counter", "Folds computed over all runs",
                [({}, folds)]),
    ]


def family(name: str, kind: str, help_text: str,
           samples: Iterable[tuple[Mapping[str, str], float]]) -> list[str]:
    """One metric family: HELP and TYPE lines, then a line per sample."""
    lines = [f"# HELP {name} {help_text}.", f"# TYPE {name} {kind}"]
    for labels, value in samples:
        text = ",".join(f'{k}="{_escape(v)}"' for k, v in labels.items())
        lines.append(f"{name}{{{text}}} {_number(value)}" if text else f"{name} {_number(value)}")
    return lines


def _escape(value: str) -> str:
    return value.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")


def _number(value: float) -> str:
    return str(int(value)) if float(value).is_integer() else repr(float(value))
