"""A live line per running claim on a terminal's stderr: claim, engine, how far it got, time.

``LiveProgress`` is the watcher ``claims.run_claims`` tells (started, told, finished). It
draws with the ``rich`` library, imported only when a display is wanted, so a run that
is piped, quiet or asked for JSON never loads it. Lines are transient: a finished claim's
line goes away, and nothing of the display is left in the terminal after the run.
"""

from __future__ import annotations

from typing import Any, Optional

def _amount(n: int) -> str:
    """A count for a glance: 950, 12.3k, 16.8M."""
    for size, unit in ((1 << 30, "G"), (1 << 20, "M"), (1000, "k")):
        if n >= size:
            return f"{n / size:.1f}{unit}"
    return str(n)


def describe(label: str, info: dict) -> str:
    """What a running claim's line says besides the time: its label, the engine, and how far
    the engine got (``searched 1.2M of 16.8M codes x inputs``, ``depth 12``, ``question 3 of 9``)."""
    parts = [label]
    if info.get("engine"):
        parts.append(str(info["engine"]))
    if info.get("step"):
        parts.append(str(info["step"]))
    if info.get("searched") is not None and info.get("of"):
        parts.append(f"searched {_amount(int(info['searched']))} of {_amount(int(info['of']))} (code, input) pairs")
    elif info.get("questions") is not None and info.get("of"):
        parts.append(f"{info['questions']} of {info['of']} questions answered")
    if info.get("decided") is not None:
        parts.append(f"{_amount(int(info['decided']))} codes decided")
    if info.get("depth") is not None:
        parts.append(f"depth {info['depth']}")
    return "  ".join(parts)


def budget_text(budget: Optional[float]) -> str:
    """The time a claim may take, as the line shows it."""
    return "(no time limit)" if budget is None else f"(limit {budget:g} s)"


class LiveProgress:
    """The live display: a line per running claim, refreshed a few times a second, on stderr."""

    def __init__(self, stream: Any = None) -> None:
        from rich.console import Console
        from rich.progress import Progress, TextColumn, TimeElapsedColumn

        self._console = Console(file=stream, stderr=stream is None, highlight=False)
        self._progress = Progress(TimeElapsedColumn(), TextColumn("{task.fields[limit]}"),
                                  TextColumn("{task.description}"), console=self._console,
                                  transient=True, refresh_per_second=4, auto_refresh=True)
        self._tasks: dict[int, Any] = {}
        self._labels: dict[int, str] = {}
        self._info: dict[int, dict] = {}

    def __enter__(self) -> "LiveProgress":
        self._progress.start()
        return self

    def __exit__(self, *exc) -> None:
        self._progress.stop()

    def started(self, key: int, label: str, budget: Optional[float]) -> None:
        self._labels[key] = label
        self._info[key] = {}
        self._tasks[key] = self._progress.add_task(label, total=None, limit=budget_text(budget))
        self._progress.refresh()

    def told(self, key: int, info: dict) -> None:
        task = self._tasks.get(key)
        if task is None:
            return
        self._info[key].update(info)
        self._progress.update(task, description=describe(self._labels[key], self._info[key]))

    def finished(self, key: int, status: str) -> None:
        task = self._tasks.pop(key, None)
        if task is not None:
            self._progress.remove_task(task)
