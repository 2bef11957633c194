"""The command line speaks to people: a file that cannot be read or written is one line naming the file and
the problem, exit status 2, never a traceback; outputs are written whole or not at all.

merge keeps exit status 1 for its one documented meaning, "conflicts remain" (docs: `python -m tamis merge -h`).
"""

import json
import os
import pathlib
import subprocess
import sys

import pytest

GOLDEN = pathlib.Path(__file__).parent / "golden"
GRADATION = {"passing": [{"opening_mm": 4.75, "passing_pct": 100}, {"opening_mm": 0.6, "passing_pct": 40},
                         {"opening_mm": 0.075, "passing_pct": 3}]}  # invented


def run(*args, cwd, stdin=None):
    return subprocess.run([sys.executable, "-m", "tamis", *map(str, args)], capture_output=True, cwd=cwd,
                          input=stdin, timeout=120)


def one_line_error(p, *words):
    err = p.stderr.decode("utf-8")
    assert p.returncode == 2, (p.returncode, err)
    assert "Traceback" not in err and b"Traceback" not in p.stdout
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: "), err
    for w in words:
        assert w in lines[0], (w, lines[0])
    return lines[0]


@pytest.fixture
def files(tmp_path):
    (tmp_path / "ok.json").write_text(json.dumps(GRADATION), encoding="utf-8")
    (tmp_path / "utf16.json").write_bytes(json.dumps(GRADATION).encode("utf-16"))          # with its BOM
    (tmp_path / "utf16le.json").write_bytes(json.dumps(GRADATION).encode("utf-16-le"))     # without one
    (tmp_path / "latin1.json").write_bytes('{"test": {"name": "Carrière"}}'.encode("latin-1"))
    (tmp_path / "folder").mkdir()
    req = json.loads((GOLDEN / "records-merge-two-devices.request.json").read_text(encoding="utf-8"))
    for i, text in enumerate(req["files"]):
        (tmp_path / f"dev{i}.csv").write_text(text, encoding="utf-8", newline="")
    return tmp_path


@pytest.mark.parametrize("command", ["gradation", "evaluate", "zones", "design_band"])
@pytest.mark.parametrize("name, words", [
    ("missing.json", ("missing.json", "no such file")),
    ("folder", ("folder", "is a folder")),
    ("utf16.json", ("utf16.json", "UTF-16")),
    ("utf16le.json", ("utf16le.json", "UTF-16")),
    ("latin1.json", ("latin1.json", "not UTF-8", "0xe8")),
])
def test_a_json_command_names_the_file_it_cannot_read_and_exits_2(files, command, name, words):
    p = run(command, name, cwd=files)
    one_line_error(p, *words)
    assert p.stdout == b""


def test_standard_input_in_utf16_is_refused_in_one_line(files):
    p = run("gradation", "-", cwd=files, stdin=json.dumps(GRADATION).encode("utf-16"))
    one_line_error(p, "standard input", "UTF-16")


def test_a_utf8_file_with_a_byte_order_mark_is_read(files):
    (files / "bom.json").write_bytes(b"\xef\xbb\xbf" + json.dumps(GRADATION).encode("utf-8"))
    p = run("gradation", "bom.json", cwd=files)
    assert p.returncode == 0, p.stderr
    assert json.loads(p.stdout)["ok"] is True


@pytest.mark.parametrize("args, words", [
    (("-o", "folder"), ("folder", "is a folder")),
    (("-o", "nowhere/merged.csv"), ("nowhere/merged.csv", "does not exist")),
    (("-o", "merged.csv", "--conflicts", "folder"), ("folder", "is a folder")),
    (("-o", "merged.csv", "--conflicts", "nowhere/c.json"), ("nowhere/c.json", "does not exist")),
])
def test_merge_to_a_place_it_cannot_write_exits_2_and_writes_nothing(files, args, words):
    before = sorted(os.listdir(files))
    p = run("merge", "dev0.csv", "dev1.csv", *args, cwd=files)
    one_line_error(p, *words)
    assert sorted(os.listdir(files)) == before          # no merged.csv, no temporary file left
    assert sorted(os.listdir(files / "folder")) == []


@pytest.mark.parametrize("name, words", [("missing.csv", ("missing.csv", "no such file")),
                                         ("folder", ("folder", "is a folder"))])
def test_merge_and_check_name_an_input_they_cannot_read(files, name, words):
    one_line_error(run("merge", "dev0.csv", name, "-o", "merged.csv", cwd=files), *words)
    assert not (files / "merged.csv").exists()
    one_line_error(run("check", name, cwd=files), *words)


def test_merge_with_conflicts_still_exits_1_and_writes_both_files_whole(files):
    p = run("merge", "dev0.csv", "dev1.csv", "-o", "merged.csv", "--conflicts", "c.json", cwd=files)
    assert p.returncode == 1, p.stderr
    assert json.loads((files / "c.json").read_text(encoding="utf-8"))["conflicts"]
    assert (files / "merged.csv").read_text(encoding="utf-8").startswith("tamis_csv,")
    assert not [n for n in os.listdir(files) if n.endswith(".tmp")]


def test_a_failed_replace_leaves_the_old_output_and_no_temporary_file(files, monkeypatch, capsys):
    # the last step of an atomic write fails (a disk error): the previous output stays as it was
    from tamis.exchange import office
    (files / "merged.csv").write_text("old content", encoding="utf-8")

    def refuse(src, dst):
        raise OSError(28, "No space left on device", dst)
    monkeypatch.setattr(office.os, "replace", refuse)
    status = office.write_all([(str(files / "merged.csv"), b"new content")])
    assert status == 2
    assert (files / "merged.csv").read_text(encoding="utf-8") == "old content"
    assert not [n for n in os.listdir(files) if n.endswith(".tmp")]
    assert "No space left on device" in capsys.readouterr().err


def test_an_atomic_write_gives_the_file_the_usual_permissions(files):
    from tamis.exchange import office
    assert office.write_all([(str(files / "new.csv"), b"x")]) is None
    mask = os.umask(0)
    os.umask(mask)
    assert (files / "new.csv").stat().st_mode & 0o777 == 0o666 & ~mask


def test_check_names_a_csv_file_saved_as_utf16_without_a_byte_order_mark(files):
    (files / "u16.csv").write_bytes((files / "dev0.csv").read_text(encoding="utf-8").encode("utf-16-le"))
    one_line_error(run("check", "u16.csv", cwd=files), "u16.csv", "UTF-16")


@pytest.mark.parametrize("target, words", [("folder", ("folder", "is a folder")),
                                           ("nowhere/r.html", ("nowhere/r.html", "does not exist"))])
def test_report_html_to_a_place_it_cannot_write_exits_2_and_writes_nothing(files, target, words):
    before = sorted(os.listdir(files))
    one_line_error(run("report", "dev0.csv", "--html", target, cwd=files), *words)
    assert sorted(os.listdir(files)) == before
    assert sorted(os.listdir(files / "folder")) == []


def test_report_html_is_written_whole(files):
    p = run("report", "dev0.csv", "--html", "r.html", cwd=files)
    assert p.returncode == 0, p.stderr
    text = (files / "r.html").read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>") and text.rstrip().endswith("</html>")
    assert [n for n in os.listdir(files) if n.endswith(".tmp")] == []
