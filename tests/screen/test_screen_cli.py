"""The screen subcommand: options, report, exit codes."""

from __future__ import annotations

import argparse
import io
import threading

import pytest

from clusterdesk.screen.cli import add_screen_parser, run_screen

from screen_helpers import SETTINGS

_LIGHT = ["--kmax", str(SETTINGS.kmax), "--restarts", str(SETTINGS.restarts), "--seed", str(SETTINGS.seed)]


def _args(*argv):
    parser = argparse.ArgumentParser(prog="clusterdesk")
    add_screen_parser(parser.add_subparsers(dest="command"))
    return parser.parse_args(["screen", *map(str, argv)])


def _small(inputs, tmp_path):
    _, files = inputs
    folder = tmp_path / "in"
    folder.mkdir()
    for name in ("good.csv", "empty.csv", "remarks.csv"):
        (folder / name).write_bytes(files[name].read_bytes())
    return folder


def test_finished_run_exits_0_even_with_failed_files_and_reports_them(inputs, tmp_path, capsys):
    folder = _small(inputs, tmp_path)
    out = io.StringIO()
    args = _args(folder, "--out", tmp_path / "o", "--workers", "1", *_LIGHT)
    assert args.func is run_screen
    assert run_screen(args, out) == 0
    text = out.getvalue()
    assert "3 ok, 1 failed, 3 skipped" in text and "failed:" in text and "empty.csv" in text
    assert "summary.csv" in text and "overview.html" in text
    assert capsys.readouterr().err == ""  # stderr is not a terminal: no progress bar unless asked


def test_progress_bar_when_asked_and_quiet_prints_nothing(inputs, tmp_path, capsys):
    folder = _small(inputs, tmp_path)
    out = io.StringIO()
    assert run_screen(_args(folder, "--out", tmp_path / "a", "--workers", "1", "--progress", *_LIGHT), out) == 0
    err = capsys.readouterr().err
    assert "screening [" in err and "left" in err and "3/3 columns" in err
    quiet = io.StringIO()
    assert run_screen(_args(folder, "--out", tmp_path / "b", "--workers", "1", "--quiet", *_LIGHT), quiet) == 0
    assert quiet.getvalue() == "" and capsys.readouterr().err == ""


def test_usage_errors_exit_2(inputs, tmp_path, capsys):
    folder = _small(inputs, tmp_path)
    out = io.StringIO()
    assert run_screen(_args(folder, "--out", tmp_path / "o", "--columns", "re:(", *_LIGHT), out) == 2
    assert "regular expression" in capsys.readouterr().err
    assert run_screen(_args(folder, "--out", tmp_path / "o", "--kmin", "5", "--kmax", "2"), out) == 2
    assert "kmin" in capsys.readouterr().err
    for argv in ([folder], [folder, "--out", tmp_path, "--workers", "0"],
                 [folder, "--out", tmp_path, "--resume", "--start-over"]):
        with pytest.raises(SystemExit) as stop:
            _args(*argv)
        assert stop.value.code == 2


def test_unfinished_run_needs_resume_or_start_over(inputs, tmp_path, capsys, monkeypatch):
    from clusterdesk.screen import runner

    folder = _small(inputs, tmp_path)
    stop = threading.Event()
    real = runner.screen

    def interrupted(*args, **kwargs):
        kwargs["cancel"] = stop
        kwargs["progress"] = lambda p: stop.set() if p.computed >= 1 else None
        return real(*args, **kwargs)

    monkeypatch.setattr("clusterdesk.screen.cli.screen", interrupted)
    out = io.StringIO()
    assert run_screen(_args(folder, "--out", tmp_path / "o", "--workers", "1", *_LIGHT), out) == 130
    monkeypatch.setattr("clusterdesk.screen.cli.screen", real)
    assert run_screen(_args(folder, "--out", tmp_path / "o", "--workers", "1", *_LIGHT), out) == 2
    assert "--resume" in capsys.readouterr().err
    resumed = io.StringIO()
    assert run_screen(_args(folder, "--out", tmp_path / "o", "--workers", "1", "--resume", *_LIGHT),
                      resumed) == 0
    assert "1 reused from the journal" in resumed.getvalue()


def test_nothing_screened_exits_3(tmp_path, capsys):
    (tmp_path / "empty.csv").write_bytes(b"")
    out = io.StringIO()
    assert run_screen(_args(tmp_path / "empty.csv", "--out", tmp_path / "o", "--workers", "1"), out) == 3
    assert "nothing could be screened" in capsys.readouterr().err
    assert run_screen(_args(tmp_path / "nothing*.csv", "--out", tmp_path / "o", "--workers", "1"), out) == 3
