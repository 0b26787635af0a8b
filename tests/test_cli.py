"""The command line: exit codes, messages, no traceback for bad data (README, command line)."""

from __future__ import annotations

import subprocess

from support import valvol_command

from valvol.cli import main


def test_check_valid_demo(demo_dir, capsys):
    assert main(["-q", "check", str(demo_dir)]) == 0
    assert "rows valid" in capsys.readouterr().out


def test_invalid_input_exit_2_located_no_traceback(accounts):
    folder = accounts("economy,period,item,price_basis,value\nXQ,2020-Q9,P6,current,1\n")
    proc = subprocess.run(
        [*valvol_command(), "-q", "check", str(folder)], capture_output=True, text=True, cwd=folder
    )
    assert proc.returncode == 2
    assert "accounts.csv:2 XQ/P6/current/2020-Q9: period must be YYYY-Qn, YYYYQn or YYYY" in proc.stderr
    assert "Traceback" not in proc.stderr


def test_bad_config_exit_2(accounts, capsys):
    folder = accounts("economy,period,item,price_basis,value\nXQ,2020,P6,current,1\n", "colour = 1\n")
    assert main(["-q", "check", str(folder)]) == 2
    assert "unknown key(s) colour" in capsys.readouterr().err


def test_rebuild_without_flow(demo_dir, tmp_path, capsys):
    assert main(["-q", "rebuild", str(demo_dir), "--out", str(tmp_path / "o"), "--no-flow"]) == 0
    assert "published in" in capsys.readouterr().out
    assert (tmp_path / "o" / "levels.parquet").exists()


def test_missing_folder_exit_2(tmp_path, capsys):
    assert main(["-q", "rebuild", str(tmp_path / "nope"), "--out", str(tmp_path / "o"), "--no-flow"]) == 2


def test_flow_path_checks_label_and_lock_before_starting_prefect(demo_dir, tmp_path, capsys):
    from valvol.io.publish import output_lock

    assert main(["-q", "rebuild", str(demo_dir), "--out", str(tmp_path / "o"), "--label", "bad label"]) == 2
    assert "vintage label" in capsys.readouterr().err
    with output_lock(tmp_path / "busy"):
        assert main(["-q", "rebuild", str(demo_dir), "--out", str(tmp_path / "busy")]) == 3
    assert "another rebuild is writing" in capsys.readouterr().err
