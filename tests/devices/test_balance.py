"""A balance on a serial line, against the simulated balance: over a pseudo-terminal
(POSIX) and over a loopback socket, as pyserial opens both.

The print lines are prepbook's own profiles (prepbook/devices/balance_profiles.toml);
what a balance must do (print a stability mark, the unit, an overload line) is common
practice, no source.
"""

from __future__ import annotations

import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from prepbook.devices.balance import (
    ReadingRefused,
    escape_raw,
    parse_print_line,
    read_mass,
)
from prepbook.devices.profiles import find_profile, load_profiles
from prepbook.devices.simulator import PtyServer, SimulatedBalance, SocketServer
from prepbook.errors import InvalidInput

POSIX_ONLY = pytest.mark.skipif(sys.platform == "win32",
                                reason="a pseudo-terminal needs Linux or macOS")
SERVERS = [pytest.param("pty", marks=POSIX_ONLY), "socket"]


@pytest.fixture(params=SERVERS)
def served(request: pytest.FixtureRequest) -> Iterator[tuple[SimulatedBalance, str]]:
    """A simulated balance (profile mark-first) and the port to open it."""
    balance = SimulatedBalance(find_profile("mark-first"), ["39.1602"])
    server: Any = PtyServer(balance) if request.param == "pty" else SocketServer(balance)
    server.start()
    try:
        yield balance, server.url
    finally:
        server.stop()


def test_a_stable_reading_is_taken_with_its_raw_line(served: tuple[SimulatedBalance, str]
                                                     ) -> None:
    balance, port = served
    reading = read_mass(port, balance.profile, timeout_s=3)
    assert reading.value_text == "39.1602" and reading.unit == "g"
    assert reading.raw == "S     +39.1602 g"
    assert reading.lines_passed_over == 0


def test_each_request_gets_the_next_mass(served: tuple[SimulatedBalance, str]) -> None:
    balance, port = served
    balance.set(masses=["0.8085", "0.8116"])
    got = [read_mass(port, balance.profile, timeout_s=3).value_text for _ in range(3)]
    assert got == ["0.8085", "0.8116", "0.8085"]


@pytest.mark.parametrize(("mode", "words"), [
    ("unstable", "not stable"),
    ("wrong-unit", "39.1602 lb, not grams"),
    ("overload", "overload"),
])
def test_a_reading_that_is_not_a_stable_mass_in_grams_is_refused(
        served: tuple[SimulatedBalance, str], mode: str, words: str) -> None:
    balance, port = served
    balance.set(mode=mode)
    with pytest.raises(ReadingRefused, match=words):
        read_mass(port, balance.profile, timeout_s=3)


def test_no_answer_within_the_time_is_refused(served: tuple[SimulatedBalance, str]) -> None:
    balance, port = served
    balance.set(mode="silent")
    with pytest.raises(ReadingRefused, match=r"no reading from the balance .* within 0.5 s"):
        read_mass(port, balance.profile, timeout_s=0.5)


def test_a_line_with_noise_around_it_is_read_and_kept_as_received(
        served: tuple[SimulatedBalance, str]) -> None:
    balance, port = served
    balance.set(mode="noisy")
    reading = read_mass(port, balance.profile, timeout_s=3)
    assert reading.value_text == "39.1602"
    assert reading.lines_passed_over == 1  # the line of noise before it
    assert reading.raw == "\\x11\\x00~S     +39.1602 g \\x13\\x7f"


@pytest.mark.parametrize("name", ["mark-first", "mark-last", "comma-fields"])
def test_every_shipped_profile_reads_what_its_simulated_balance_prints(name: str) -> None:
    balance = SimulatedBalance(find_profile(name), ["-0.0003", "120.5"])
    server = SocketServer(balance).start()
    try:
        got = [read_mass(server.url, balance.profile, timeout_s=3).value_text
               for _ in range(2)]
        balance.set(mode="unstable")
        with pytest.raises(ReadingRefused, match="not stable"):
            read_mass(server.url, balance.profile, timeout_s=3)
    finally:
        server.stop()
    assert got == ["-0.0003", "120.5"]


def test_a_port_that_cannot_be_opened_is_one_line() -> None:
    with pytest.raises(ReadingRefused, match="cannot open the balance's port"):
        read_mass("/nonexistent/ttyUSB9", find_profile("mark-first"), timeout_s=0.3)


def test_parse_print_line_finds_the_line_and_its_mark() -> None:
    p = find_profile("mark-last")
    assert parse_print_line("  12.3456 g ?", p).stable is False  # type: ignore[union-attr]
    line = parse_print_line("##  12.3456 g  ", p)
    assert line is not None and (line.value_text, line.unit, line.stable) == \
        ("12.3456", "g", True)
    assert parse_print_line("*** header ***", p) is None


def test_raw_bytes_are_escaped_one_for_one() -> None:
    assert escape_raw(b"S +1.0 g\\\x00\xff") == "S +1.0 g\\x5c\\x00\\xff"


def test_the_lab_file_adds_and_replaces_profiles(tmp_path: Path) -> None:
    own = tmp_path / "ours.toml"
    shipped = (Path(__file__).parents[2] / "prepbook" / "devices" /
               "balance_profiles.toml").read_text(encoding="utf-8")
    block = shipped[shipped.index("[profile.mark-first]"):shipped.index("[profile.mark-last]")]
    own.write_text(block.replace("[profile.mark-first]", "[profile.bench-3]")
                   + block.replace("speed = 9600", "speed = 1200"), encoding="utf-8")
    profiles = load_profiles(own)
    assert profiles["bench-3"].source == str(own)
    assert profiles["mark-first"].speed == 1200  # the lab's own wins on a name
    assert profiles["comma-fields"].source == "shipped"


@pytest.mark.parametrize(("change", "words"), [
    (("parity = \"none\"", "parity = \"sometimes\""), "parity 'sometimes'"),
    (("(?P<unit>", "(?P<units>"), "named groups value and unit"),
    (("stop_bits = 1", "stop_bits = 3"), "stop_bits 3"),
    (("speed = 9600", "speed = 9600\nflow = 1"), "unknown key"),
])
def test_a_bad_profile_is_one_line_naming_it(tmp_path: Path, change: tuple[str, str],
                                             words: str) -> None:
    shipped = (Path(__file__).parents[2] / "prepbook" / "devices" /
               "balance_profiles.toml").read_text(encoding="utf-8")
    own = tmp_path / "bad.toml"
    own.write_text(shipped.replace(*change, 1), encoding="utf-8")
    with pytest.raises(InvalidInput, match=words):
        load_profiles(own)


@pytest.mark.parametrize("port", [pytest.param("pty", marks=POSIX_ONLY), "0"])
def test_the_simulate_balance_command_serves_then_stops(port: str) -> None:
    import subprocess

    proc = subprocess.Popen(
        [sys.executable, "-m", "prepbook", "instrument", "simulate-balance", "--port", port,
         "--profile", "mark-last", "--mass", "1.2345", "--mode", "noisy", "--for", "6"],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        assert proc.stdout is not None
        url = proc.stdout.readline().strip()
        assert url.startswith("socket://127.0.0.1:" if port == "0" else "/dev/")
        reading = read_mass(url, find_profile("mark-last"), timeout_s=5)
        assert reading.value_text == "1.2345"
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.communicate()
    assert proc.returncode == 0, err
    assert "simulated balance (mark-last, noisy, 1.2345 g)" in err
