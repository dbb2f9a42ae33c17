"""Progress and messages of the command line on stderr; results on stdout."""
from __future__ import annotations

import sys

__all__ = ["Console", "PROG", "one_line"]

PROG = "transit-risk"

_STAGE_LABELS = {
    "propagation": "propagation (samples)",
    "sensitivity": "sensitivity (Saltelli + polynomial chaos)",
    "decisions": "decisions (verdict, contingency, tests)",
    "study": "study (every variant on shared samples)",
}


def one_line(text: object) -> str:
    """``text`` on one line (runs of white space, line breaks included, become one space)."""
    return " ".join(str(text).split()) or "unknown error"


class Console:
    """Progress on stderr: tqdm bars on a terminal, one-line stage messages when piped."""

    def __init__(self, *, quiet: bool, stream=None):
        self.stream = stream if stream is not None else sys.stderr
        self.quiet = quiet
        try:
            self.tty = bool(self.stream.isatty())
        except (AttributeError, ValueError):
            self.tty = False
        self._bar = None
        self._stage = None
        self._ticker = None

    def _tick(self, stop) -> None:
        """Refresh the open bar twice a second so elapsed time moves in long stages."""
        while not stop.wait(0.5):
            bar = self._bar
            if bar is not None:
                try:
                    bar.refresh()
                except Exception:  # a bar closed under our feet: nothing to show
                    pass

    def _start_ticker(self) -> None:
        if self._ticker is None:
            import threading

            stop = threading.Event()
            thread = threading.Thread(target=self._tick, args=(stop,), daemon=True)
            thread.start()
            self._ticker = (stop, thread)

    def stop(self) -> None:
        """Close the bar and stop the refresher thread."""
        self.close_bar()
        if self._ticker is not None:
            self._ticker[0].set()
            self._ticker[1].join(timeout=1.0)
            self._ticker = None

    def message(self, text: str) -> None:
        """A one-line status message (not when quiet)."""
        if self.quiet:
            return
        self.close_bar()
        print(f"{PROG}: {text}", file=self.stream, flush=True)

    def stage(self, name: str, done: int, total: int) -> None:
        """Progress callback of :func:`uq.studies.assess.assess`."""
        if self.quiet:
            return
        label = _STAGE_LABELS.get(name, name)
        if name != self._stage:
            self.close_bar()
            self._stage = name
            if self.tty:
                from tqdm import tqdm

                self._start_ticker()
                self._bar = tqdm(total=total, desc=label, file=self.stream, leave=True,
                                 unit="" if total <= 1 else " samples", dynamic_ncols=True,
                                 bar_format=None if total > 1 else "{desc}: {elapsed}")
            else:
                print(f"{PROG}: {label}...", file=self.stream, flush=True)
        if self._bar is not None:
            self._bar.n = min(done, self._bar.total or done)
            self._bar.refresh()

    def step(self, text: str) -> None:
        """Progress callback of :func:`uq.report.write_report`."""
        if self.quiet:
            return
        if self._stage != "report":
            self.close_bar()
            self._stage = "report"
            if self.tty:
                from tqdm import tqdm

                self._bar = tqdm(total=4, desc="report", file=self.stream, leave=True,
                                 dynamic_ncols=True, bar_format="{desc}: {n}/{total} {postfix} [{elapsed}]")
            else:
                print(f"{PROG}: writing the report...", file=self.stream, flush=True)
        if self._bar is not None:
            self._bar.set_postfix_str(text, refresh=False)
            if self._bar.n < self._bar.total:
                self._bar.update(1)
            else:
                self._bar.refresh()

    def close_bar(self) -> None:
        if self._bar is not None:
            self._bar.close()
            self._bar = None
        self._stage = None

    def result(self, text: str) -> None:
        """A result line on stdout (not when quiet)."""
        if not self.quiet:
            self.close_bar()
            print(text, flush=True)
