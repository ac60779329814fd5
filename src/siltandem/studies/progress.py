"""Progress of a chunked study run (studies.runner): a line on stderr, a tqdm bar or a callback.

Silent unless asked: the API's studies pass ``progress=False`` by default; the command line
passes True (the stderr line, once the run has lasted :data:`PROGRESS_DELAY_S`).
"""
import sys
import time

import numpy as np

#: The progress line appears once a run has lasted this long [s].
PROGRESS_DELAY_S = 2.0


def reporter(progress, total, already):
    """The progress reporter a run was asked for (see :func:`run_chunks`): update(rows), close()."""
    if progress == "tqdm":
        return Bar(total, already)
    if callable(progress) and not isinstance(progress, bool):
        return Callback(progress, total, already)
    return Progress(total, enabled=bool(progress), already=already)


class Callback:
    """``progress(done_rows, total_rows)`` after each finished chunk (once at the start when
    chunks came from disk)."""

    def __init__(self, function, total, already):
        self.function, self.total, self.done = function, total, already
        if already:
            function(already, total)

    def update(self, rows):
        self.done += rows
        self.function(self.done, self.total)

    def close(self):
        pass


class Bar:
    """A ``tqdm.auto`` bar: a widget in a notebook, a text bar in a terminal."""

    def __init__(self, total, already):
        from tqdm.auto import tqdm

        self.bar = tqdm(total=total, initial=already, unit="rows", desc="designs")

    def update(self, rows):
        self.bar.update(rows)

    def close(self):
        self.bar.close()


class Progress:
    """One line on stderr: rows done / total, rate, time left; only once the run is slow."""

    def __init__(self, total, *, enabled=True, already=0, delay=None, clock=time.monotonic,
                 stream=None):
        self.total, self.done, self.already = total, already, already
        self.enabled, self.clock, self.stream = enabled, clock, stream
        self.delay = PROGRESS_DELAY_S if delay is None else delay
        self.start = self.last = clock()
        self.shown = False
        self.width = 0

    def _stream(self):
        return self.stream if self.stream is not None else sys.stderr

    def line(self):
        elapsed = max(self.clock() - self.start, 1e-9)
        rate = (self.done - self.already) / elapsed
        left = (self.total - self.done) / rate if rate > 0 else float("nan")
        if np.isfinite(left):
            minutes, seconds = divmod(round(left), 60)
            eta = f"{minutes // 60:d}:{minutes % 60:02d}:{seconds:02d}"
        else:
            eta = "?"
        resumed = f", {self.already:,} from disk" if self.already else ""
        return (f"rows {self.done:,} / {self.total:,} ({100 * self.done / self.total:.0f} %)"
                f"{resumed}  {rate:,.0f} rows/s  left {eta}")

    def update(self, rows):
        self.done += rows
        if not self.enabled:
            return
        now = self.clock()
        stream = self._stream()
        tty = getattr(stream, "isatty", lambda: False)()
        if now - self.start < self.delay or (self.shown and now - self.last < (0.5 if tty else 10)):
            return
        self.last, self.shown = now, True
        text = self.line()
        self.width = max(self.width, len(text))
        stream.write("\r" + text.ljust(self.width) if tty else text + "\n")
        stream.flush()

    def close(self):
        if self.enabled and self.shown:
            stream = self._stream()
            tty = getattr(stream, "isatty", lambda: False)()
            elapsed = self.clock() - self.start
            text = self.line() + f"  done in {elapsed:.1f} s"
            stream.write(("\r" + text.ljust(self.width) if tty else text) + "\n")
            stream.flush()
            self.shown = False
            self.enabled = False
