"""The command line as a user meets it: bad arguments give one line and exit 2; --version; demo paths."""

import pytest

from degreewise import VERSION
from degreewise.commands import main


def exit_code(argv):
    try:
        return main(argv)
    except SystemExit as stop:
        return stop.code


def test_version(capsys):
    assert exit_code(["--version"]) == 0
    assert capsys.readouterr().out == f"degreewise {VERSION}\n"


@pytest.mark.parametrize("argv,message", [
    (["refresh", "book.xlsx", "--jobs", "0"],
     "degreewise refresh: argument --jobs: needs a whole number of at least 1, not '0' (see degreewise --help)"),
    (["refresh", "book.xlsx", "--jobs", "-3"],
     "degreewise refresh: argument --jobs: needs a whole number of at least 1, not '-3' (see degreewise --help)"),
    (["refresh", "book.xlsx", "--jobs", "two"],
     "degreewise refresh: argument --jobs: needs a whole number of at least 1, not 'two' (see degreewise --help)"),
    (["refresh"], "degreewise refresh: the following arguments are required: paths (see degreewise --help)"),
    (["refresh", "book.xlsx", "--bogus"], "degreewise: unrecognized arguments: --bogus (see degreewise --help)"),
    ([], "degreewise: the following arguments are required: command (see degreewise --help)"),
])
def test_bad_arguments_give_one_line_and_exit_2(capsys, argv, message):
    assert exit_code(argv) == 2
    captured = capsys.readouterr()
    assert captured.err == message + "\n" and captured.out == ""


def test_demo_into_an_existing_file_is_refused(tmp_path, capsys):
    target = tmp_path / "book.xlsx"
    target.write_bytes(b"mine")
    assert exit_code(["demo", str(target)]) == 2
    assert capsys.readouterr().err == (f"degreewise demo: {target} is a file; give a folder to write the demo "
                                       "workbooks into\n")
    assert target.read_bytes() == b"mine"


def test_demo_into_a_path_that_cannot_be_made(tmp_path, capsys):
    (tmp_path / "plain").write_bytes(b"")
    target = tmp_path / "plain" / "missing" / "demo"
    assert exit_code(["demo", str(target)]) == 1
    assert capsys.readouterr().err == (f"degreewise demo: cannot write the demo workbooks into {target}: "
                                       "Not a directory\n")
