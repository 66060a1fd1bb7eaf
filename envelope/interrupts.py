"""Stopping a run cleanly: SIGINT, SIGTERM and SIGHUP unwind like an error (edge).

While `Interrupts.installed` is active, each of the three signals raises `Interrupted` in the
main thread, so that the ``with`` blocks of the run (staging folders, the lock) clean up on
the way out and the command line exits with 128 + the signal number. `Interrupts.hold`
defers them over the final renames, which must not be cut in half.
"""

from __future__ import annotations

import contextlib
import signal
import threading

__all__ = ["Interrupted", "Interrupts", "no_hold"]

_SIGNALS = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))


class Interrupted(KeyboardInterrupt):
    """A run stopped by SIGINT, SIGTERM or SIGHUP.

    ``committed`` is the output folder when the signal arrived while the finished outputs
    were being moved into place (the move was completed first), else None.
    """

    def __init__(self, signum: int, committed=None):
        super().__init__(signum)
        self.signum = int(signum)
        self.committed = committed

    @property
    def exit_code(self) -> int:
        """128 + the signal number, as shells report a process ended by a signal."""
        return 128 + self.signum

    @property
    def signal_name(self) -> str:
        try:
            return signal.Signals(self.signum).name
        except ValueError:
            return f"signal {self.signum}"


class Interrupts:
    """While `installed`, SIGINT, SIGTERM and SIGHUP raise `Interrupted`; `hold` defers them.

    Used by the command line so that every way of stopping a run cleans up like Ctrl-C.
    Handlers are installed only in the main thread and the previous ones are restored.
    """

    def __init__(self):
        self._held = 0
        self._pending: int | None = None

    def _handler(self, signum, frame):
        if self._held:
            if self._pending is None:
                self._pending = signum
            return
        raise Interrupted(signum)

    @contextlib.contextmanager
    def installed(self):
        if threading.current_thread() is not threading.main_thread():
            yield self
            return
        old = {s: signal.signal(s, self._handler) for s in _SIGNALS}
        try:
            yield self
        finally:
            for s, h in old.items():
                signal.signal(s, h)

    @contextlib.contextmanager
    def hold(self, committed=None):
        """Defer signals over a block that must not be cut (the final renames); a signal
        that arrived meanwhile is raised after it, as `Interrupted` with `committed`."""
        self._held += 1
        try:
            yield
        finally:
            self._held -= 1
        if not self._held and self._pending is not None:
            signum, self._pending = self._pending, None
            raise Interrupted(signum, committed=committed)


def no_hold(committed=None):
    """A stand-in for `Interrupts.hold` that defers nothing (use without the command line)."""
    return contextlib.nullcontext()
