"""Shared test set-up: keep the suite away from the user's files.

Runs made by the tests (in this process, in ``python -m tdse1d.cli`` subprocesses and
in scan workers) keep FFTW wisdom in a cache directory. :func:`tdse1d.io.wisdom.wisdom_path`
places it under ``$XDG_CACHE_HOME``; the fixture below points that variable at a
temporary directory for the whole session, before any test runs, so no test reads a
user's wisdom or writes into their cache. The variable is inherited by subprocesses.
"""

from __future__ import annotations

import os

import pytest

#: the user's XDG_CACHE_HOME before the suite replaced it (None: unset)
USER_CACHE_HOME = os.environ.get("XDG_CACHE_HOME")


@pytest.fixture(scope="session")
def user_cache_home():
    """The user's own ``XDG_CACHE_HOME`` (None if unset), for tests that check it is untouched."""
    return USER_CACHE_HOME


@pytest.fixture(scope="session", autouse=True)
def private_cache_home(tmp_path_factory):
    """Point ``XDG_CACHE_HOME`` at a session-wide temporary directory."""
    previous = os.environ.get("XDG_CACHE_HOME")
    cache = tmp_path_factory.mktemp("cache-home")
    os.environ["XDG_CACHE_HOME"] = str(cache)
    try:
        yield cache
    finally:
        if previous is None:
            os.environ.pop("XDG_CACHE_HOME", None)
        else:
            os.environ["XDG_CACHE_HOME"] = previous


class Handshake:
    """The test's side of a run's handshake (docs/checkpoints.md, "Testing the signals").

    Makes the hold directory and the FIFO in it that runs announce on, and waits on that
    pipe: :meth:`wait` returns the first announcement of a phase as soon as it is written
    (``select`` wakes on the write; its timeout only bounds how often the other process is
    checked to be alive). No fixed delay and no polling of the file system.
    """

    def __init__(self, directory):
        from pathlib import Path

        self.directory = Path(directory)
        self.directory.mkdir(parents=True, exist_ok=True)
        fifo = self.directory / "announce"
        os.mkfifo(fifo)
        # read and write: the pipe never reads as ended between two writers
        self._fd = os.open(fifo, os.O_RDWR | os.O_NONBLOCK)
        self._pending = b""
        self.seen: list[dict] = []

    @property
    def environment(self) -> dict:
        """The environment variables that make a run (or a scan worker) announce here."""
        return {"TDSE1D_TEST_HOLD": str(self.directory)}

    def wait(self, phase: str, alive=lambda: True, limit: float = 120.0) -> dict:
        """The next announcement of ``phase`` (a dict: pid, phase, and what the run adds).

        Fails when ``alive()`` turns false first or after ``limit`` seconds.
        """
        import json
        import select
        import time

        deadline = time.monotonic() + limit
        while True:
            while b"\n" in self._pending:
                line, self._pending = self._pending.split(b"\n", 1)
                record = json.loads(line)
                self.seen.append(record)
                if record["phase"] == phase:
                    return record
            assert alive(), f"the process ended before announcing {phase!r}"
            remaining = deadline - time.monotonic()
            assert remaining > 0, f"no {phase!r} announcement within {limit} s"
            readable, _, _ = select.select([self._fd], [], [], min(remaining, 0.5))
            if readable:
                self._pending += os.read(self._fd, 65536)

    def release(self) -> None:
        """Let every held run continue (and any later one pass its hold point)."""
        (self.directory / "go").touch()

    def close(self) -> None:
        if self._fd is not None:
            os.close(self._fd)
            self._fd = None

    __del__ = close


@pytest.fixture
def handshake(tmp_path):
    """A :class:`Handshake` in ``tmp_path / "hold"``."""
    h = Handshake(tmp_path / "hold")
    try:
        yield h
    finally:
        h.release()
        h.close()


def _toml_value(value) -> str:
    return f'"{value}"' if isinstance(value, str) else repr(value)


def small_pair_input(*, field=0.3, snapshots=3, propagation="") -> str:
    """The TOML text of a small and fast two-electron input: a 2-cycle pulse of photon
    energy 1 a.u. and peak field ``field`` (a.u.) on a 48^2 grid of 0.8 bohr;
    ``propagation`` is raw text added to the ``[propagation]`` table."""
    lines = ["[atom]", 'model = "two-electron"', "[[laser]]", 'photon_energy = "1 au"', f"peak_field = {field}",
             "cycles = 2", "[grid]", "points = 48", "spacing = 0.8", "[absorber]", 'width = "3 bohr"',
             "[propagation]", "time_step = 0.05", 'after_pulse = "1 au"']
    lines += [propagation] if propagation else []
    lines += ["[output]", f"snapshots = {snapshots}", "snapshot_stride = 4"]
    return "\n".join(lines) + "\n"


def small_input(*, intensity="1e14 W/cm^2", envelope=None, cycles=2, points=256, spacing=0.4,
                absorber_width=None, time_step=0.2, gauge=None, after_pulse="0.5 fs", propagation="",
                photoelectrons=None, snapshots=0) -> str:
    """The TOML text of a small and fast one-electron input, the common start of the tests' inputs.

    An 800 nm pulse on a coarse grid with a fitted soft-core atom (softening sqrt(2)); each
    keyword changes one key (None leaves it out, so the input's default applies);
    ``propagation`` is raw text added to the ``[propagation]`` table. ``[output]`` comes
    last, so that a test can append output keys to the text.
    """
    lines = ["", "[atom]", "softening = 1.4142135623730951", "[[laser]]", 'wavelength = "800 nm"',
             f"peak_intensity = {_toml_value(intensity)}"]
    lines += [f"envelope = {_toml_value(envelope)}"] if envelope is not None else []
    lines += [f"cycles = {cycles}", "[grid]", f"points = {points}", f"spacing = {spacing}"]
    lines += ["[absorber]", f"width = {_toml_value(absorber_width)}"] if absorber_width is not None else []
    lines += ["[propagation]", f"time_step = {time_step}"]
    lines += [f"gauge = {_toml_value(gauge)}"] if gauge is not None else []
    lines += [f"after_pulse = {_toml_value(after_pulse)}"] if after_pulse is not None else []
    lines += [propagation] if propagation else []
    lines += ["[spectra]", f"photoelectrons = {_toml_value(photoelectrons)}"] if photoelectrons is not None else []
    lines += ["[output]", f"snapshots = {snapshots}"] if snapshots is not None else []
    return "\n".join(lines) + "\n"
