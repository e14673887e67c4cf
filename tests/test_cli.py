"""The ``tm-compare`` command: help is complete, every command is documented, errors are one line.

The one-line ``Error: ...`` with exit code 1 and ``--debug`` for the traceback follows the habit
of sqlite-utils' CLI (common practice for command-line tools).
"""

from __future__ import annotations

import argparse
import re
from pathlib import Path

import pytest

from tm_compare.cli import COMMANDS, build_parser, main

README = Path(__file__).resolve().parent.parent / "README.md"


def _subparsers() -> dict[str, argparse.ArgumentParser]:
    parser = build_parser()
    action = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return dict(action.choices)


@pytest.mark.parametrize("name", COMMANDS)
def test_every_command_is_documented_in_the_readme(name):
    text = README.read_text(encoding="utf-8")
    assert re.search(rf"tm-compare {name}\b", text), (
        f"README.md does not mention `tm-compare {name}`"
    )


def test_main_help_lists_every_command(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["--help"])
    assert stop.value.code == 0
    out = capsys.readouterr().out
    assert "--debug" in out
    for name in COMMANDS:
        assert re.search(rf"^\s+{name}\s+\S", out, re.M), f"{name} has no help line"


@pytest.mark.parametrize("name", COMMANDS)
def test_every_sub_command_help_is_complete(name, capsys):
    sub = _subparsers()[name]
    assert sub.description and len(sub.description) > 60
    for action in sub._actions:
        if isinstance(action, argparse._HelpAction):
            continue
        assert action.help, f"{name}: option {action.option_strings or action.dest} has no help"
    with pytest.raises(SystemExit) as stop:
        main([name, "--help"])
    assert stop.value.code == 0
    assert capsys.readouterr().out.startswith(f"usage: tm-compare {name}")


def _error(argv, capsys) -> str:
    code = main(argv)
    err = capsys.readouterr().err
    assert code == 1
    assert "Traceback" not in err
    first = err.splitlines()[0]
    assert first.startswith("Error: ")
    return first


@pytest.mark.parametrize("name", ["report", "export"])
def test_missing_project_is_one_line_error(name, tmp_path, capsys):
    line = _error([name, str(tmp_path / "nowhere")], capsys)
    assert "is not a tm_compare project" in line and "Project.create" in line


def test_a_file_instead_of_a_project(tmp_path, capsys):
    bad = tmp_path / "notes.csv"
    bad.write_text("id,text\n1,hello\n")
    line = _error(["report", str(bad)], capsys)
    assert str(bad) in line and "not a tm_compare project" in line


def test_project_without_a_sweep(tmp_path, capsys):
    from tm_compare.project import Project

    Project.create(tmp_path / "p")
    line = _error(["export", str(tmp_path / "p")], capsys)
    assert "has no saved sweep" in line and "tm-compare sweep PROJECT" in line


@pytest.mark.slow
def test_k_not_in_the_sweep_and_debug_shows_the_traceback(capsys, tmp_path):
    from test_pipeline import small_demo

    run, _ = small_demo()
    line = _error(
        ["report", str(run.project.path), "--k", "9", "--out", str(tmp_path / "r.html")], capsys
    )
    assert "no fit with k=9" in line and "Existing fits are: (k=4, seed=0)" in line
    assert main(["--debug", "report", str(run.project.path), "--k", "9"]) == 1
    assert "Traceback" in capsys.readouterr().err


@pytest.mark.slow
def test_report_and_export_commands_write_their_files(capsys, tmp_path):
    from test_pipeline import small_demo

    run, _ = small_demo()
    project = str(run.project.path)
    assert (
        main(
            [
                "report",
                project,
                "--k",
                "6",
                "--seed",
                "1",
                "--n-boot",
                "50",
                "--out",
                str(tmp_path / "k6.html"),
            ]
        )
        == 0
    )
    assert "k=6, seed 1" in capsys.readouterr().out
    assert (tmp_path / "k6.html").exists()
    assert (
        main(
            [
                "export",
                project,
                "--charts",
                "svg",
                "--tables",
                "csv",
                "--n-boot",
                "50",
                "--out",
                str(tmp_path / "out"),
            ]
        )
        == 0
    )
    assert "Exported" in capsys.readouterr().out
    assert {p.suffix for p in (tmp_path / "out").rglob("*.*")} == {".csv", ".md", ".svg"}


def test_bad_format_list_is_a_usage_error(capsys):
    # Usage errors take the same one-line path as every other error (argparse alone would
    # print its usage block and exit 2).
    line = _error(["export", "somewhere", "--charts", "gif"], capsys)
    assert "--charts: got 'gif'; give a comma-separated list of png, svg" in line
    assert "tm-compare export --help" in line


@pytest.mark.slow
def test_a_damaged_score_table_is_recomputed_not_used(capsys, tmp_path):
    import shutil

    import pandas as pd
    from test_pipeline import small_demo

    run, _ = small_demo()
    copy = tmp_path / "project"
    shutil.copytree(run.project.path, copy)
    (copy / "scores" / "scores.parquet").write_bytes(b"not a parquet file")
    assert main(["report", str(copy), "--n-boot", "20", "--out", str(tmp_path / "r.html")]) == 0
    assert "was edited or damaged" in capsys.readouterr().err
    pd.testing.assert_frame_equal(
        pd.read_parquet(copy / "scores" / "scores.parquet").drop(columns="fit_seconds"),
        run.sweep.scores_.drop(columns="fit_seconds"),
    )


def test_sweep_and_demo_flags_are_the_python_names_and_old_spellings_still_work():
    parser = build_parser()
    args = parser.parse_args(["sweep", "p", "--n-terms", "7", "--holdout-random-state", "3"])
    assert (args.n_terms, args.holdout_random_state, args.n_jobs) == (7, 3, -1)
    with pytest.warns(FutureWarning, match="--topn is deprecated.*use --n-terms instead"):
        assert parser.parse_args(["sweep", "p", "--topn", "5"]).n_terms == 5
    with pytest.warns(FutureWarning, match="--seed is deprecated.*use --random-state instead"):
        assert parser.parse_args(["demo", "--seed", "4"]).random_state == 4
    assert "(n_jobs in the Python API" in _subparsers()["sweep"].format_help()


def test_labels_model_flag_still_works_with_a_future_warning(tmp_path, capsys):
    from tm_compare.labels.store import LabelStore
    from tm_compare.project import Project

    project = Project.create(tmp_path / "p")
    with LabelStore(project, analyst="Ana Quill") as store:
        store.save("fit-1", 0, name="Harbour")
    with pytest.warns(FutureWarning, match="--model is deprecated.*use --fit instead"):
        assert main(["labels", str(project.path), "list", "--model", "fit-1"]) == 0
    assert "Harbour" in capsys.readouterr().out


def test_debug_anywhere_and_usage_errors_exit_1(capsys):
    line = _error(["sweep", "nowhere", "--jobs", "zero"], capsys)
    assert "argument --jobs: invalid int value: 'zero'" in line
    assert main(["sweep", "nowhere", "--jobs", "zero", "--debug"]) == 1
    err = capsys.readouterr().err
    assert "Traceback" in err and "UsageError" in err


def test_a_bug_is_one_line_that_says_so(monkeypatch, capsys):
    from tm_compare.cli import _report

    def broken(args):
        raise RuntimeError("boom")

    monkeypatch.setattr(_report, "run", broken)
    line = _error(["report", "somewhere"], capsys)
    assert "unexpected failure (RuntimeError: boom)" in line and "a bug in tm_compare" in line


def test_warnings_print_as_one_note_line(monkeypatch):
    import warnings

    from tm_compare.cli import _report

    seen = []

    def run(args):  # how a warning raised during the command is formatted
        seen.append(warnings.formatwarning("first line\nsecond line", UserWarning, "x.py", 1))
        return 0

    monkeypatch.setattr(_report, "run", run)
    before = warnings.formatwarning
    assert main(["report", "somewhere"]) == 0
    assert seen == ["Note: first line second line\n"]
    assert warnings.formatwarning is before  # restored after the command
    assert main(["--debug", "report", "somewhere"]) == 0
    assert seen[-1].startswith("x.py:1: UserWarning")  # --debug keeps Python's own format
