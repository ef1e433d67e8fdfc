"""The JSON keys of the session and account commands are a contract: scripts read them."""

from __future__ import annotations

from tests.cli.test_json_keys_admin import USER, keys
from tests.cli.test_sessions import ADA, BEN, lab  # noqa: F401
from tests.conftest import Cli

# The commands whose --json keys this file pins (test_json_keys_audit checks the union).
PINNED = {"login", "whoami", "user passphrase", "user reset", "user role"}
SESSION = ["user", "role", "os_login", "host", "started_at", "last_seen_at", "idle_until",
           "until", "live", "state"]


def test_session_and_account_commands_keep_their_keys(lab: Cli) -> None:  # noqa: F811
    assert lab.json("whoami") == []
    opened = lab.json("login", "ada", "--passphrase-stdin", input=f"{ADA}\n")
    assert keys(opened) == ["version", *SESSION] and opened["live"] is True
    assert [keys(s) for s in lab.json("whoami")] == [SESSION]
    role = lab.json("user", "role", "ben", "reviewer", "--reason", "promoted",
                    "--passphrase-stdin", input=f"{ADA}\n")
    assert keys(role) == ["version", *USER] and role["role"] == "reviewer"
    reset = lab.json("user", "reset", "ben", "--reason", "forgot it", "--passphrase-stdin",
                     input=f"{ADA}\nonce-only-temporary-1\n")
    assert keys(reset) == ["version", *USER]
    changed = lab.json("user", "passphrase", "ben", "--passphrase-stdin",
                       input=f"once-only-temporary-1\n{BEN}\n")
    assert keys(changed) == ["version", *USER] and changed["name"] == "ben"
