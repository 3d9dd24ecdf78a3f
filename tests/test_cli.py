"""The command line: help for every verb, one-line errors with exit 2, no torch at start-up."""

from __future__ import annotations

import subprocess
import sys

import pytest

from genfield import cli


def run_cli(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "genfield", *args], capture_output=True, text=True, timeout=120
    )


def test_top_help_lists_every_verb_without_importing_torch():
    probe = subprocess.run(
        [sys.executable, "-c",
         "import sys, genfield.cli as c; c.main(['--help']); print('TORCH', 'torch' in sys.modules)"],
        capture_output=True, text=True, timeout=60,
    )
    assert probe.returncode == 0, probe.stderr
    for verb in cli.VERBS:
        assert verb in probe.stdout
    assert "TORCH False" in probe.stdout


@pytest.mark.parametrize("verb", list(cli.VERBS))
def test_every_verb_has_help(verb, capsys):
    assert cli.main([verb, "--help"]) == 0
    out = capsys.readouterr().out
    assert f"genfield {verb}" in out


@pytest.mark.parametrize(
    "argv",
    [
        ["nonsense"],
        ["trian"],
        ["render"],  # missing recipe and --out
        ["check", "a.recipe", "--no-such-flag"],
        ["bench", "--case"],
        ["--no-such-top-flag", "check"],
    ],
)
def test_bad_arguments_give_one_line_and_exit_2(argv):
    proc = run_cli(*argv)
    assert proc.returncode == 2, proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1, proc.stderr
    assert lines[0].startswith("genfield: error: ")
    assert "Traceback" not in proc.stderr


def test_unknown_verb_suggests_the_nearest():
    proc = run_cli("trian")
    assert "did you mean 'train'" in proc.stderr


def test_an_internal_error_still_prints_one_useful_line(monkeypatch, capsys):
    import genfield.commands.check as check

    def explode(args):
        raise ZeroDivisionError("boom in the checker")

    monkeypatch.setattr(check, "run", explode)
    code = cli.main(["check", "x.recipe"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 1
    assert len(err) == 1
    assert err[0].startswith("genfield: internal error: ZeroDivisionError: boom in the checker")
    assert "--debug" in err[0]


def test_debug_shows_the_traceback(monkeypatch):
    import genfield.commands.check as check

    def explode(args):
        raise ZeroDivisionError("boom")

    monkeypatch.setattr(check, "run", explode)
    with pytest.raises(ZeroDivisionError):
        cli.main(["--debug", "check", "x.recipe"])


def test_genfield_error_context_is_printed_under_the_line(monkeypatch, capsys):
    import genfield.commands.check as check
    from genfield.errors import RecipeError

    def bad(args):
        raise RecipeError("expected a number", where="r.gfr:3:9", context="  scale = ;\n          ^")

    monkeypatch.setattr(check, "run", bad)
    assert cli.main(["check", "r.gfr"]) == 2
    err = capsys.readouterr().err.splitlines()
    assert err[0] == "genfield: error: r.gfr:3:9: expected a number"
    assert err[2].strip() == "^"


def test_version():
    proc = run_cli("--version")
    assert proc.returncode == 0
    assert proc.stdout.startswith("genfield ")
