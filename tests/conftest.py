"""Session fixtures for the servers the tests need (see tests/servers.py): started only when a test asks."""

from __future__ import annotations

from collections.abc import Iterator

import pytest

from wakeyard.core.blas import one_blas_thread

from . import servers

# One BLAS/MKL thread in the test process, as the worker and `wakeyard run` have: PARDISO's threaded solves are not
# bit-reproducible, and the resume tests compare a resumed run with an uninterrupted one bit for bit.
one_blas_thread()

pytest_plugins = ["tests.fixtures"]  # the service fixtures (stores, the API, a worker)


@pytest.fixture(scope="session")
def redis_url() -> Iterator[str]:
    """``redis://host:port`` without a database number."""
    with servers.provide("redis") as url:
        yield url


@pytest.fixture(scope="session")
def postgres_url() -> Iterator[str]:
    """A SQLAlchemy URL of a PostgreSQL database the tests may create schemas in."""
    with servers.provide("postgres") as url:
        yield url


@pytest.fixture(scope="session")
def amqp_url() -> Iterator[str]:
    """A RabbitMQ broker (``amqp://``) with the guest user."""
    with servers.provide("amqp") as url:
        yield url


def pytest_terminal_summary(terminalreporter: pytest.TerminalReporter) -> None:
    for record in servers.used:
        how = "started here (and stopped)" if record.started else "found"
        terminalreporter.write_line(f"test server {record.name}: {how} at {record.url}")
