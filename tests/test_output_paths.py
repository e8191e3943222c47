"""Output goes only where the user asked, as a regular file with the umask's mode
(issue 15: an export written over a symbolic link, FIFO or device replaced it, and every
file was created mode 0600 whatever the umask)."""

from __future__ import annotations

import os
import stat

import pytest

import capbench as cb
from capbench import files
from capbench.errors import InputError


def _fixture():
    return cb.parallel_discs(radius="12 mm", gap="1.5 mm")


def test_a_symbolic_link_at_the_target_is_refused_and_its_target_kept(tmp_path):
    victim = tmp_path / "victim.txt"
    victim.write_text("keep me")
    link = tmp_path / "out.toml"
    link.symlink_to(victim)
    with pytest.raises(InputError, match="symbolic link"):
        files.write_fixture(_fixture(), link)
    assert victim.read_text() == "keep me"
    assert link.is_symlink()


def test_a_fifo_at_the_target_is_refused_without_blocking(tmp_path):
    fifo = tmp_path / "out.toml"
    os.mkfifo(fifo)
    with pytest.raises(InputError, match="FIFO"):
        files.write_fixture(_fixture(), fifo)
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)


def test_a_directory_at_the_target_is_refused(tmp_path):
    (tmp_path / "out.toml").mkdir()
    with pytest.raises(InputError, match="directory"):
        files.write_fixture(_fixture(), tmp_path / "out.toml")


@pytest.mark.parametrize("mask", [0o022, 0o027, 0o077])
def test_a_new_file_follows_the_umask(tmp_path, mask):
    old = os.umask(mask)
    try:
        path = files.write_fixture(_fixture(), tmp_path / f"f{mask:o}.toml")
    finally:
        os.umask(old)
    assert stat.S_IMODE(os.stat(path).st_mode) == 0o666 & ~mask


def test_an_existing_file_keeps_its_mode_and_gets_the_new_content(tmp_path):
    path = tmp_path / "f.toml"
    path.write_text("old")
    os.chmod(path, 0o640)
    files.write_fixture(_fixture(), path)
    assert stat.S_IMODE(os.stat(path).st_mode) == 0o640
    assert files.read_fixture(path) == _fixture()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no temp left


def test_bytes_are_written_whole(tmp_path):
    data = bytes(range(256)) * 100
    files._atomic_write(tmp_path / "r.pdf", data)
    assert (tmp_path / "r.pdf").read_bytes() == data


# ------------------------------------------------------------------ files a measurement names

SECRET = "root:x:0:0:the first line of a file the user never named\n"


def _measurement(folder, readings):
    src = files.Path(__file__).resolve().parent.parent / "fixtures" / "quillfield"
    text = (src / "qf-pe-03.toml").read_text()
    text = text.replace('readings = "qf-pe-03_readings.csv"', f"readings = {readings!r}")
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "m.toml").write_text(text)
    return folder / "m.toml", (src / "qf-pe-03_readings.csv").read_text()


@pytest.mark.parametrize("name", ["../outside/secret.csv", "/{abs}/secret.csv"])
def test_readings_outside_the_folder_are_refused_without_quoting_them(tmp_path, name):
    outside = tmp_path / "outside"
    outside.mkdir()
    (outside / "secret.csv").write_text(SECRET)
    path, _ = _measurement(tmp_path / "lab", name.format(abs=str(outside).strip("/")))
    with pytest.raises(InputError) as info:
        files.read_measurement(path)
    message = str(info.value)
    assert "outside the measurement's folder" in message
    assert "--allow-outside" in message
    assert "root:x" not in message


def test_a_link_inside_the_folder_that_leads_out_is_refused(tmp_path):
    (tmp_path / "secret.csv").write_text(SECRET)
    path, _ = _measurement(tmp_path / "lab", "r.csv")
    (tmp_path / "lab" / "r.csv").symlink_to(tmp_path / "secret.csv")
    with pytest.raises(InputError, match="outside the measurement's folder"):
        files.read_measurement(path)


def test_a_subfolder_is_inside_and_allow_outside_reads_elsewhere(tmp_path):
    path, csv = _measurement(tmp_path / "lab", "data/r.csv")
    (tmp_path / "lab" / "data").mkdir()
    (tmp_path / "lab" / "data" / "r.csv").write_text(csv)
    assert len(files.read_measurement(path).readings) > 0
    path2, _ = _measurement(tmp_path / "lab2", "../lab/data/r.csv")
    with pytest.raises(InputError):
        files.read_measurement(path2)
    m = files.read_measurement(path2, allow_outside=True)
    assert m.readings == files.read_measurement(path).readings


def test_the_command_line_refuses_and_allows_on_request(tmp_path, capsys):
    from capbench.cli import main

    path, csv = _measurement(tmp_path / "lab2", "../lab/r.csv")
    (tmp_path / "lab").mkdir()
    (tmp_path / "lab" / "r.csv").write_text(csv)
    assert main(["extract", str(path), "--closed-form"]) == 1
    assert "outside the measurement's folder" in capsys.readouterr().err
    assert main(["extract", str(path), "--closed-form", "--allow-outside"]) == 0


# ------------------------------------------------------------------ spreadsheet cells


@pytest.mark.parametrize(
    "prefix", ["\u00a0", "\u2009", "\u3000", "\u200b", "\u2060", "\ufeff", "\x00", "\x0b", "\x0c"]
)
@pytest.mark.parametrize("formula", ["=HYPERLINK(1)", "+1+1", "-2+3", "@SUM(A1)"])
def test_a_formula_behind_an_invisible_character_is_neutralised(prefix, formula):
    # the usual defence against CSV formula injection (common practice, no source)
    assert files.safe_cell(prefix + formula) == "'" + prefix + formula


def test_plain_text_and_numbers_pass_unchanged():
    assert files.safe_cell("PE-03 film") == "PE-03 film"
    assert files.safe_cell(-2.5) == -2.5


def test_an_entry_number_beyond_the_log_is_a_usage_error(capsys):
    from capbench.cli import main

    assert main(["log", "show", "99999999999999999999"]) == 2
    err = capsys.readouterr().err
    assert "is not an entry number" in err and "Traceback" not in err
