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
