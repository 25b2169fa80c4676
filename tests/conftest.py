"""Shared fixtures.  Simulator tests use real ngspice and never skip: `make test` installs it."""

from __future__ import annotations

from pathlib import Path

import pytest

DATA = Path(__file__).parent / "data"
NETLISTS = DATA / "netlists"


@pytest.fixture(autouse=True, scope="session")
def _private_cache(tmp_path_factory):
    """Keep the tests' result cache out of the user's own (~/.cache/derate)."""
    import os
    folder = tmp_path_factory.mktemp("derate-cache")
    os.chmod(folder, 0o700)
    old = os.environ.get("DERATE_CACHE_DIR")
    os.environ["DERATE_CACHE_DIR"] = str(folder)
    yield folder
    if old is None:
        os.environ.pop("DERATE_CACHE_DIR", None)
    else:
        os.environ["DERATE_CACHE_DIR"] = old


@pytest.fixture(scope="session")
def ngspice_pool():
    """A pool of two ngspice workers shared by the whole test session."""
    from derate.simulate.worker import WorkerPool

    pool = WorkerPool(2)
    try:
        version = pool.version()
    except RuntimeError as exc:  # a missing simulator is a failure, not a skip
        pytest.fail(f"ngspice shared library is not usable ({exc}); run `make test` to install it")
    assert version.startswith("39") or version.split(".")[0].isdigit()
    yield pool
    pool.close()


@pytest.fixture
def write(tmp_path):
    """Write a text file under tmp_path and return its path."""
    def _write(name: str, text: str) -> Path:
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
        return path
    return _write
