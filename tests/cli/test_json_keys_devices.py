"""The JSON keys of the balance commands are a contract: scripts read them."""

from __future__ import annotations

from collections.abc import Iterator

import pytest

from prepbook.devices.profiles import find_profile
from prepbook.devices.simulator import SimulatedBalance, SocketServer
from tests.cli.test_bench_flow import bench  # noqa: F401 (fixture)
from tests.conftest import Cli

# The commands whose --json keys this file pins (test_json_keys_audit checks the union).
PINNED = {"instrument read", "instrument connect", "instrument profiles"}
READ = ["version", "balance", "mass_g", "mass_text", "unit", "raw", "read_at", "port",
        "profile"]
CONNECT = ["version", "balance", "port", "profile", "connection_version", "speed", "data_bits",
           "parity", "stop_bits", "connected_at", "connected_by"]
PROFILE = ["name", "description", "speed", "data_bits", "parity", "stop_bits", "source"]


@pytest.fixture
def url() -> Iterator[str]:
    server = SocketServer(SimulatedBalance(find_profile("comma-fields"), ["12.0034"])).start()
    try:
        yield server.url
    finally:
        server.stop()


def test_balance_command_keys(bench: Cli, url: str) -> None:  # noqa: F811
    connected = bench.json("instrument", "connect", "BAL-1", "--port", url, "--profile",
                           "comma-fields", user="ben")
    assert list(connected) == CONNECT
    read = bench.json("instrument", "read", "BAL-1")
    assert list(read) == READ
    assert (read["mass_text"], read["raw"]) == ("12.0034", "ST,+12.0034,g")
    profiles = bench.json("instrument", "profiles")
    assert [list(p) for p in profiles] == [PROFILE] * len(profiles)
    assert {p["name"] for p in profiles} >= {"mark-first", "mark-last", "comma-fields"}
