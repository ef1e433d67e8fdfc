"""Hostile input on the command line (issues 6 and 14): random and malicious strings
for numbers, dates, codes, notes and output paths never produce a traceback or a
partial write. Issue 14 adds digits of other scripts, Rich markup, reportlab tags,
escape sequences and control characters in every text field and option; a text
that was recorded is then shown by every command that reads it, without a
traceback and without a raw control character on the terminal.

Each command ends with exit 0 (the input happened to be valid), 1 (refused: one
line "prepbook: ..." on stderr, nothing on stdout) or 2 (usage error); on 1 or 2
every table keeps its row count and no file appears.

Bounded: a fixed number of examples per command, no deadline (a few are slow on
purpose: 10 kB strings, passphrase checks).
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.conftest import Cli, on_postgres, row_counts, scratch_pg_database
from tests.reliability.lab import REPS, build_lab

MALICIOUS = [
    "'; DROP TABLE batches; --", "1; DELETE FROM audit_events", "' OR '1'='1", "\"; --",
    "../../etc/x", "..\\..\\windows\\x", "/dev/null/x", "\x00", "a\x00b", "\r\n", "\t",
    "\x1b[2J\x1b[31m", "\u202eexe.db", "\ufeff1", "\u200b", "\udcff", "NaN", "nan", "inf",
    "-inf", "-0", "0", "1e309", "-1e-400", "0x10", "1_000", "1,5", "１２", "١٢٣", "½", "²",
    "2026-02-30", "2026-13-01", "9999-12-31T99:99", "0000-00-00", "2026-11-30T25:00",
    "1970-01-01", "%s%s%n", "{0}", "${jndi:ldap://x}", "$(id)", "`id`", "<script>",
    "-", "--", "--json", "-h", " ", "", "9" * 400, "é" * 5000, "x" * 10_000,
]
# Digits of other scripts that look like ours ("0.৪085" reads as 0.8085), markup of the
# terminal (Rich) and of reportlab paragraphs, and escape sequences.
UNICODE_DIGITS = ["0.৪085", "٣.٥", "१२३", "１２.５", "0.4085٠", "๑", "𝟏.𝟓", "²", "Ⅻ",
                  "0.8​085", " 0.5"]
MARKUP = ["[/]", "x [/bold]", "[bold red]ACCEPTED[/] [link=http://x]y[/link]", "[",
          "\\[/]", "[@click=app.quit]q[/]", "<b>x</b>", "</para>", "<font size=99>B",
          "&amp;", "&#0;", "<img src=x/>", "<link href='http://x'>y</link>", ":smile:"]
ESCAPES = ["\x1b[2J\x1b[H", "\x1b]8;;http://x\x1b\\y\x1b]8;;\x1b\\", "\x1b[31mred\x1b[0m",
           "\x9b31m", "a\rb", "\x08\x08", "\x07", "\u2066x\u2069", "\u202eevil", "\x7f"]
SHOWN_TEXT = st.one_of(
    st.sampled_from(UNICODE_DIGITS + MARKUP + ESCAPES),
    st.builds("".join, st.lists(st.sampled_from(MARKUP + ESCAPES + ["x", " ", "\n"]),
                               min_size=1, max_size=6)),
    st.text(alphabet=st.characters(categories=["Cc", "Cf", "Ps", "Pe", "Nd", "Sm"]),
            max_size=12),
)
# Any text (control characters and unicode included), the malicious ones, numbers
# in every form, and long strings.
HOSTILE = st.one_of(
    st.sampled_from(MALICIOUS),
    SHOWN_TEXT,
    st.text(max_size=40),
    st.text(alphabet=st.characters(max_codepoint=0x1F), max_size=8),
    st.from_regex(r"[+-]?\d{0,8}([.,]\d{0,8})?([eE][+-]?\d{1,4})?", fullmatch=True),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(min_value=-10**30, max_value=10**30).map(str),
    st.dates().map(str),
    st.builds(lambda s, n: (s or "x") * n, st.text(min_size=1, max_size=3),
              st.integers(1000, 10_000)),
)
# Output paths stay inside the sandbox folder: relative, never from "/" or "~".
PATHS = st.one_of(HOSTILE, st.sampled_from(["../../etc/x", "../../../x.pdf", "a/../../b.csv"]))\
    .filter(lambda p: not p.startswith(("/", "~", "\\")) and ":" not in p[:3])

FUZZ = settings(max_examples=25, deadline=None, derandomize=True, database=None,
                suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow,
                                       HealthCheck.data_too_large, HealthCheck.filter_too_much])


@pytest.fixture(scope="module")
def lab_target(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[str, str, str]]:
    """One lab for the module: its target, the batch in service, a run awaiting review."""
    from prepbook.lab import batches, runs
    from prepbook.store.engine import open_database

    def build(target: str) -> tuple[str, str, str]:
        in_service = build_lab(target)
        db = open_database(target)
        try:
            made = batches.make_batch(db, actor="ben", spec="NaOH-0.1N", volume="1000",
                                      solute_mass="4.1", balance="BAL-1")
            run = runs.standardize(db, actor="ben", batch=made.batch, replicates=REPS,
                                   lot="KHP-0001", balance="BAL-1", burette="BUR-1")
        finally:
            db.dispose()
        return target, in_service, run.run

    if on_postgres():
        with scratch_pg_database() as url:
            yield build(url)
    else:
        yield build(str(tmp_path_factory.mktemp("fuzz") / "lab.db"))


@pytest.fixture
def sandbox(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """The working folder, deep enough that ../../x stays under tmp_path."""
    here = tmp_path / "a" / "b" / "c"
    here.mkdir(parents=True)
    monkeypatch.chdir(here)
    return tmp_path


def _files(root: Path) -> set[str]:
    # Not the home folder, nor the session files of the suite's own logins (conftest).
    return {str(p.relative_to(root)) for p in root.rglob("*")
            if not p.name.endswith(("-wal", "-shm", "-journal"))
            and p.relative_to(root).parts[0] not in ("home", "sessions")}


def _run(lab: tuple[str, str, str], sandbox: Path, *args: str, user: str = "ben",
         input: str | None = None) -> int:
    """Run one command; check the outcome is one of the three allowed ones."""
    target = lab[0]
    cli = Cli(target)
    before_rows = row_counts(target)
    before_files = _files(sandbox)
    result = cli(*args, user=user, input=input)  # raises on any uncaught exception
    assert result.exit_code in (0, 1, 2), (args, result.exit_code, result.stderr)
    assert "Traceback" not in result.stdout + result.stderr, (args, result.stderr)
    if result.exit_code == 0:
        return 0
    if result.exit_code == 1:
        lines = result.stderr.strip().splitlines()
        assert result.stdout == "", (args, result.stdout)
        assert len(lines) == 1 and lines[0].startswith("prepbook: "), (args, result.stderr)
    assert row_counts(target) == before_rows, args
    assert _files(sandbox) == before_files, args
    return int(result.exit_code)


def _shows_cleanly(lab: tuple[str, str, str], *commands: tuple[str, ...]) -> None:
    """Every command that reads the record prints it: exit 0, no traceback, and no
    raw escape or control character reaching the terminal."""
    cli = Cli(lab[0])
    for args in (("audit", "log", "--limit", "5"), ("spec", "list"), ("lot", "list"),
                 ("status",), *commands):
        result = cli(*args)
        assert result.exit_code == 0, (args, result.stderr)
        raw = [ch for ch in result.stdout if not (ch.isprintable() or ch in "\n")]
        assert not raw, (args, raw)


def _command_exists(name: str) -> bool:
    import typer.main

    from prepbook.cli.app import app

    return name in typer.main.get_command(app).commands  # type: ignore[attr-defined]


@FUZZ
@given(mass=HOSTILE, volume=HOSTILE)
def test_calc_normality(lab_target, sandbox, mass: str, volume: str) -> None:
    _run(lab_target, sandbox, "calc", "normality", "--standard", "KHP", "--titrant", "NaOH",
         "--rep", f"{mass}:{volume}", "--rep", "0.8116:39.29", "--json")


@FUZZ
@given(code=HOSTILE, purity=HOSTILE, expires=HOSTILE)
def test_lot_add(lab_target, sandbox, code: str, purity: str, expires: str) -> None:
    _run(lab_target, sandbox, "lot", "add", "KHP", "--code", code, "--purity", purity,
         "--expires", expires)


@FUZZ
@given(code=HOSTILE, due=HOSTILE, readability=HOSTILE, kind=HOSTILE)
def test_instrument_add(lab_target, sandbox, code: str, due: str, readability: str,
                        kind: str) -> None:
    _run(lab_target, sandbox, "instrument", "add", code, "--kind",
         kind if len(kind) % 2 else "balance", "--due", due, "--readability", readability)


@FUZZ
@given(volume=HOSTILE, notes=HOSTILE, at=HOSTILE, spec=HOSTILE)
def test_batch_make(lab_target, sandbox, volume: str, notes: str, at: str, spec: str) -> None:
    _run(lab_target, sandbox, "batch", "make", spec if len(spec) % 3 == 0 else "NaOH-0.1N",
         "--volume", volume, "--solute-mass", "4.1", "--notes", notes, "--at", at)


@FUZZ
@given(rep=HOSTILE, temp=HOSTILE, blank=HOSTILE)
def test_standardize(lab_target, sandbox, rep: str, temp: str, blank: str) -> None:
    _run(lab_target, sandbox, "standardize", lab_target[1], "--lot", "KHP-0001",
         "--rep", rep, "--rep", "0.8116:39.29", "--rep", "0.8596:41.67",
         "--temp", temp, "--blank", blank)


@settings(FUZZ, max_examples=12)
@given(reason=HOSTILE, run=HOSTILE)
def test_review_reason(lab_target, sandbox, reason: str, run: str) -> None:
    _run(lab_target, sandbox, "review", run if len(run) % 2 else lab_target[2], "--reject",
         "--reason", reason, "--passphrase-stdin", user="cleo", input="cleo-passphrase\n")


@FUZZ
@given(since=HOSTILE, until=HOSTILE, record=HOSTILE)
def test_audit_log(lab_target, sandbox, since: str, until: str, record: str) -> None:
    _run(lab_target, sandbox, "audit", "log", "--since", since, "--until", until,
         "--record", record, "--json")


@FUZZ
@given(code=HOSTILE, nominal=HOSTILE, rsd=HOSTILE, solute=HOSTILE)
def test_spec_add(lab_target, sandbox, code: str, nominal: str, rsd: str, solute: str) -> None:
    _run(lab_target, sandbox, "spec", "add", code, "--solute",
         solute if len(solute) % 2 else "NaOH", "--nominal", nominal, "--rsd", rsd,
         user="ada")


@FUZZ
@given(volume=HOSTILE, purpose=HOSTILE, at=HOSTILE)
def test_use(lab_target, sandbox, volume: str, purpose: str, at: str) -> None:
    _run(lab_target, sandbox, "use", lab_target[1], "--volume", volume, "--purpose", purpose,
         "--at", at)


@FUZZ
@given(path=PATHS)
def test_backup_output(lab_target, sandbox, path: str) -> None:
    _run(lab_target, sandbox, "backup", "-o", path)


@FUZZ
@given(path=PATHS, since=HOSTILE)
def test_export_output(lab_target, sandbox, path: str, since: str) -> None:
    if not _command_exists("export"):
        pytest.skip("no export command yet")
    _run(lab_target, sandbox, "export", "batches", "--format", "csv", "-o", path,
         "--since", since)


@FUZZ
@given(path=PATHS, size=HOSTILE)
def test_label_output(lab_target, sandbox, path: str, size: str) -> None:
    if not _command_exists("label"):
        pytest.skip("no label command yet")
    _run(lab_target, sandbox, "label", lab_target[1], "-o", path,
         *(("--size", size) if len(size) % 2 else ()))


@settings(FUZZ, max_examples=15)
@given(name=SHOWN_TEXT, storage=SHOWN_TEXT, indicator=SHOWN_TEXT)
def test_spec_text_fields_are_shown_as_text(lab_target, sandbox, name: str, storage: str,
                                            indicator: str) -> None:
    if _run(lab_target, sandbox, "spec", "add", "NaOH-0.3N", "--solute", "NaOH", "--nominal",
            "0.3", "--name", name, "--storage", storage, "--indicator", indicator,
            user="ada") == 0:
        _shows_cleanly(lab_target)


@settings(FUZZ, max_examples=15)
@given(notes=SHOWN_TEXT, certificate=SHOWN_TEXT, purpose=SHOWN_TEXT)
def test_notes_certificates_and_purposes_are_shown_as_text(lab_target, sandbox, notes: str,
                                                          certificate: str, purpose: str) -> None:
    _run(lab_target, sandbox, "lot", "add", "KHP", "--code", "KHP-T", "--purity", "99.9",
         "--expires", "2031-01-01", "--certificate", certificate)
    made = Cli(lab_target[0])("batch", "make", "NaOH-0.1N", "--volume", "1000",
                              "--solute-mass", "4.1", "--notes", notes, "--json", user="ben")
    _run(lab_target, sandbox, "use", lab_target[1], "--volume", "1", "--purpose", purpose)
    shows = [("trace", lab_target[1]), ("batch", "show", lab_target[1])]
    if made.exit_code == 0:
        import json

        code = json.loads(made.stdout)["batch"]
        shows += [("batch", "show", code), ("trace", code)]
    _shows_cleanly(lab_target, *shows)


@settings(FUZZ, max_examples=12)
@given(reason=SHOWN_TEXT, at=st.one_of(HOSTILE, SHOWN_TEXT))
def test_retire_reason_and_time(lab_target, sandbox, reason: str, at: str) -> None:
    made = Cli(lab_target[0]).json("batch", "make", "NaOH-0.1N", "--volume", "1000",
                                   "--solute-mass", "4.1", user="ben")
    if _run(lab_target, sandbox, "batch", "retire", made["batch"], "--reason", reason,
            "--at", at, "--passphrase-stdin", input="ben-passphrase\n") == 0:
        _shows_cleanly(lab_target, ("batch", "show", made["batch"]))


@settings(FUZZ, max_examples=12)
@given(indicator=SHOWN_TEXT, at=st.one_of(HOSTILE, SHOWN_TEXT), reason=SHOWN_TEXT)
def test_standardize_indicator_and_time(lab_target, sandbox, indicator: str, at: str,
                                        reason: str) -> None:
    if _run(lab_target, sandbox, "standardize", lab_target[1], "--lot", "KHP-0001",
            "--rep", "0.8085:39.16", "--rep", "0.8116:39.29", "--rep", "0.8596:41.67",
            "--indicator", indicator, "--at", at, "--reason", reason) == 0:
        _shows_cleanly(lab_target, ("batch", "show", lab_target[1]))


@settings(FUZZ, max_examples=12)
@given(key=st.sampled_from(["timezone", "late_entry_hours", "warning_lead_days"]),
       value=st.one_of(HOSTILE, SHOWN_TEXT))
def test_settings_values(lab_target, sandbox, key: str, value: str) -> None:
    _run(lab_target, sandbox, "settings", "set", key, value, "--reason", "fuzz",
         "--passphrase-stdin", user="ada", input="ada-passphrase\n")
    _shows_cleanly(lab_target, ("settings",))


@FUZZ
@given(limit=HOSTILE, copies=HOSTILE)
def test_count_options(lab_target, sandbox, limit: str, copies: str) -> None:
    _run(lab_target, sandbox, "audit", "log", "--limit", limit)
    _run(lab_target, sandbox, "label", lab_target[1], "-o", "x.pdf", "--copies", copies)


def test_the_fuzz_reaches_the_parsers(lab_target, sandbox) -> None:
    """A known-bad and a known-good input through the same path, so the fuzz above
    cannot pass by never getting past the option parser."""
    target = lab_target[0]
    cli = Cli(target)
    before = row_counts(target)
    result = cli.refused("lot", "add", "KHP", "--code", "KHP-0002", "--purity",
                         "'; DROP TABLE batches; --", "--expires", "2031-01-01", user="ben")
    assert "purity" in result.stderr.lower()
    assert row_counts(target) == before
    cli.ok("lot", "add", "KHP", "--code", "KHP-0002", "--purity", "99.95", "--expires",
           "2031-01-01", user="ben")
    assert row_counts(target)["lots"] == before["lots"] + 1
    assert os.getcwd().startswith(str(sandbox))
