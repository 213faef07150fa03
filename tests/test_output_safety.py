"""``--out`` replaces only a folder netopt wrote: never a user's documents, a file or the case itself.

Facts of the trade checked (common practice, no source): a tool that writes results must not delete
what it did not write; refusing is a usage error (exit 2) with a message naming the path.
"""

from __future__ import annotations

import shutil

import pandas as pd
import pytest
from casekit import make_case_dir

from netopt.cli import main
from netopt.present.files import OUTPUT_MARK, OutputRefused, atomic_folder, check_output_folder


def _run(argv, capsys):
    with pytest.raises(SystemExit) as e:
        main(argv)
    return e.value.code, capsys.readouterr().err


def test_a_folder_of_documents_is_refused_and_kept(tmp_path, capsys):
    case = make_case_dir(tmp_path)
    docs = tmp_path / "documents"
    docs.mkdir()
    (docs / "thesis.docx").write_text("years of work")
    code, err = _run(["solve", str(case), "--out", str(docs), "--quiet", "--no-report"], capsys)
    assert code == 2
    assert "did not write" in err and "Traceback" not in err
    assert (docs / "thesis.docx").read_text() == "years of work"


def test_the_case_folder_and_its_parent_are_refused(tmp_path, capsys):
    case = make_case_dir(tmp_path)
    before = sorted(p.name for p in case.iterdir())
    for out in (case, tmp_path):
        code, err = _run(["solve", str(case), "--out", str(out), "--quiet", "--no-report"], capsys)
        assert code == 2 and "case folder" in err
    assert sorted(p.name for p in case.iterdir()) == before


def test_a_file_is_refused_and_not_renamed(tmp_path, capsys):
    case = make_case_dir(tmp_path)
    f = tmp_path / "notes.txt"
    f.write_text("keep me")
    code, err = _run(["solve", str(case), "--out", str(f), "--quiet", "--no-report"], capsys)
    assert code == 2 and "is a file" in err
    assert f.read_text() == "keep me"
    assert not list(tmp_path.glob(".notes.txt.*"))


def test_a_folder_netopt_wrote_is_replaced_and_marked(tmp_path, capsys):
    case = make_case_dir(tmp_path)
    out = tmp_path / "results"
    for _ in range(2):
        code, _err = _run(["solve", str(case), "--out", str(out), "--quiet", "--no-report"], capsys)
        assert code == 0
        assert (out / OUTPUT_MARK).is_file() and (out / "summary.json").is_file()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".results.")]


def test_current_folder_refused_and_empty_folder_allowed(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(OutputRefused):
        check_output_folder(".")
    (tmp_path / "empty").mkdir()
    assert check_output_folder(tmp_path / "empty") == tmp_path / "empty"


def test_a_failed_write_leaves_the_earlier_results(tmp_path):
    out = tmp_path / "results"
    with atomic_folder(out) as tmp:
        (tmp / "flows.csv").write_text("first")
    with pytest.raises(RuntimeError), atomic_folder(out) as tmp:
        (tmp / "flows.csv").write_text("second, half")
        raise RuntimeError("interrupted")
    assert (out / "flows.csv").read_text() == "first"
    shutil.rmtree(out)


def test_results_of_an_earlier_netopt_without_the_mark_are_replaceable(tmp_path):
    # Folders written before the mark existed carry summary.json with netopt's disclaimer.
    old = tmp_path / "results"
    old.mkdir()
    (old / "summary.json").write_text('{"status": "optimal", "disclaimer": "decision support"}')
    (old / "flows.csv").write_text("origin\n")
    assert check_output_folder(old) == old
    (old / "summary.json").write_text('{"my": "own file"}')
    with pytest.raises(OutputRefused):
        check_output_folder(old)


def test_formula_looking_names_are_neutralised_in_every_result_csv(tmp_path, capsys):
    # OWASP "CSV injection" guidance (a cell starting with =, +, -, @, tab or CR is run as a formula by
    # spreadsheet programs; prefix an apostrophe): a customer named like a formula comes out as text in
    # every CSV, and numbers stay numbers.
    case = make_case_dir(tmp_path)
    evil = '=HYPERLINK("http://x","y")'
    for f in case.glob("*.csv"):
        text = f.read_text(encoding="utf-8")
        f.write_text(text.replace("CU-BRU", '"' + evil.replace('"', '""') + '"'), encoding="utf-8")
    out = tmp_path / "results"
    code, err = _run(["solve", str(case), "--out", str(out), "--quiet", "--no-report"], capsys)
    assert code == 0, err
    seen = 0
    for f in out.glob("*.csv"):
        frame = pd.read_csv(f, dtype=str, keep_default_na=False)
        for col in frame.columns:
            cells = frame[col].tolist()
            assert not any(c[:1] in ("=", "+", "@", "\t", "\r") for c in cells), (f.name, col)
            seen += sum(c == "'" + evil for c in cells)
    assert seen > 0
    flows = pd.read_csv(out / "flows.csv")
    assert pd.api.types.is_numeric_dtype(flows["quantity"])
