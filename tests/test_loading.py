"""Loading files: delimiter and decimal mark found from the file or named in `load`, workbooks'
sheets, Parquet, and clear messages where a file cannot be read as it stands. The reference for
every value is the file's own text, read with Python's csv module and Decimal."""
import csv
import io
from decimal import Decimal
from pathlib import Path

import pandas as pd
import pytest

import permq
from permq.data import tables as data_tables

ROOT = Path(__file__).resolve().parents[1]

# a spreadsheet export in a decimal-comma locale (our own small example)
SEMICOLON = "sorte;ertrag;gewicht\nA;12,4;1.234,5\nA;13,1;1.100,0\nA;12,9;1.050,0\n" \
            "B;11,0;980,25\nB;10,8;1.010,5\nB;11,6;995,0\n"


def written_values(text: str, column: str, delimiter=";") -> list:
    """The column's numbers as written: Python's csv module, then Decimal with the marks swapped."""
    rows = list(csv.DictReader(io.StringIO(text), delimiter=delimiter))
    return [float(Decimal(r[column].replace(".", "").replace(",", "."))) for r in rows]


def session(tmp_path):
    return permq.Session(base_dir=tmp_path)


def note_of(s, statement):
    [out] = s.run(statement)
    assert not isinstance(out, permq.Failure), f"{out.message} ({out.hint})"
    return out


def failure_of(s, statement):
    [out] = s.run(statement)
    assert isinstance(out, permq.Failure), out
    return out


def test_semicolons_and_decimal_commas_are_found(tmp_path):
    (tmp_path / "ernte.csv").write_text(SEMICOLON)
    s = session(tmp_path)
    note = note_of(s, 'load "ernte.csv"')
    assert note.text.endswith("read with delimiter ';', decimal ',', thousands '.'")
    frame = s.catalog.tables["ernte"].frame
    assert list(frame.columns) == ["sorte", "ertrag", "gewicht"]
    assert frame["ertrag"].tolist() == written_values(SEMICOLON, "ertrag")
    assert frame["gewicht"].tolist() == written_values(SEMICOLON, "gewicht")


def test_named_delimiter_and_decimal_give_the_same_table(tmp_path):
    (tmp_path / "ernte.csv").write_text(SEMICOLON.replace("1.", "1"))   # no thousands points
    s = session(tmp_path)
    note_of(s, 'load "ernte.csv" as a')
    note_of(s, 'load "ernte.csv" as b delimiter ";" decimal ","')
    pd.testing.assert_frame_equal(s.catalog.tables["a"].frame, s.catalog.tables["b"].frame)
    assert s.catalog.tables["b"].frame["ertrag"].dtype.kind == "f"


def test_an_analysis_of_the_loaded_numbers_matches_the_same_numbers_inline(tmp_path):
    (tmp_path / "ernte.csv").write_text(SEMICOLON)
    s = session(tmp_path)
    note_of(s, 'load "ernte.csv"')
    [r] = s.run('compare ertrag by sorte levels "A", "B"')
    a, b = written_values(SEMICOLON, "ertrag")[:3], written_values(SEMICOLON, "ertrag")[3:]
    [ref] = permq.run(f"compare {a} vs {b}")
    assert r.outcome.p_value == ref.outcome.p_value == pytest.approx(2 / 20)  # 1 of 20 each tail


def test_quoted_decimal_commas_in_a_comma_file_become_numbers(tmp_path):
    (tmp_path / "q.csv").write_text('g,y\nA,"12,4"\nA,"13,1"\nB,"11,0"\nB,\n')
    s = session(tmp_path)
    note_of(s, 'load "q.csv"')
    y = s.catalog.tables["q"].frame["y"]
    assert y.iloc[:3].tolist() == [12.4, 13.1, 11.0] and y.isna().iloc[3]


def test_a_file_with_both_decimal_marks_is_refused(tmp_path):
    (tmp_path / "m.csv").write_text("g;y\nA;12,4\nA;13.1\nB;0.5\n")
    s = session(tmp_path)
    f = failure_of(s, 'load "m.csv"')
    assert "both '.' and ','" in f.message and "12,4 on line 2 and 13.1 on line 3" in f.message
    assert 'decimal ","' in f.hint
    assert note_of(s, 'load "m.csv" decimal "."')   # told, it loads (12,4 stays text)


def test_the_wrong_delimiter_is_refused_not_read_as_one_column(tmp_path):
    (tmp_path / "e.csv").write_text(SEMICOLON)
    s = session(tmp_path)
    f = failure_of(s, 'load "e.csv" delimiter ","')
    assert "reads as one column" in f.message and "';'" in f.message
    assert f.hint == 'name the delimiter: load "e.csv" delimiter ";"'
    assert f.caret.splitlines()[1].strip() == "^^^"        # under the delimiter given


def test_tabs_in_a_text_file_and_tab_by_name(tmp_path):
    (tmp_path / "t.txt").write_text("g\ty\nA\t1.5\nB\t2.5\n")
    s = session(tmp_path)
    assert "delimiter tab" in note_of(s, 'load "t.txt"').text
    assert s.catalog.tables["t"].frame["y"].tolist() == [1.5, 2.5]
    note_of(s, 'load "t.txt" as u delimiter "tab"')
    assert s.catalog.tables["u"].shape == (2, 2)


def test_a_plain_csv_says_nothing_about_how_it_was_read(tmp_path):
    note = note_of(permq.Session(base_dir=ROOT / "demo"), 'load "trays.csv"')
    assert note.text == "loaded 'trays': 19 rows, 5 columns (now in use)"


def test_options_that_do_not_fit_the_file(tmp_path):
    (tmp_path / "e.csv").write_text(SEMICOLON)
    s = session(tmp_path)
    assert "applies to workbooks" in failure_of(s, 'load "e.csv" sheet "data"').message
    assert "one character" in failure_of(s, 'load "e.csv" delimiter ";;"').message
    f = failure_of(s, 'load "e.csv" delimiter "," decimal ","')
    assert "both ','" in f.message and 'delimiter ";"' in f.hint
    assert "'.' or ','" in failure_of(s, 'load "e.csv" decimal "x"').message


def test_save_replays_the_load_with_its_options(tmp_path):
    (tmp_path / "e.csv").write_text(SEMICOLON)
    s = session(tmp_path)
    note_of(s, 'load "e.csv" as e delimiter ";" decimal ","')
    note_of(s, 'save "s.pq"')
    line = (tmp_path / "s.pq").read_text().splitlines()[1]
    assert line == f'load "{tmp_path / "e.csv"}" as e delimiter ";" decimal ","'
    again = permq.Session(base_dir=tmp_path)
    again.run(line)
    pd.testing.assert_frame_equal(again.catalog.tables["e"].frame, s.catalog.tables["e"].frame)


# ---------------------------------------------------------------- workbooks and parquet

FRAME = pd.DataFrame({"g": list("AABB"), "y": [1.5, 2.5, 3.5, 4.0]})


def test_workbook_sheets(tmp_path):
    pytest.importorskip("openpyxl")
    with pd.ExcelWriter(tmp_path / "b.xlsx") as w:
        FRAME.to_excel(w, sheet_name="notes", index=False)
        FRAME.assign(y=FRAME.y * 2).to_excel(w, sheet_name="data", index=False)
    s = session(tmp_path)
    assert "sheet 'notes' (the first; also 'data')" in note_of(s, 'load "b.xlsx"').text
    assert s.catalog.tables["b"].frame["y"].tolist() == [1.5, 2.5, 3.5, 4.0]
    note_of(s, 'load "b.xlsx" as d sheet "data"')
    assert s.catalog.tables["d"].frame["y"].tolist() == [3.0, 5.0, 7.0, 8.0]
    f = failure_of(s, 'load "b.xlsx" sheet "Data"')
    assert f.message == "no sheet 'Data' in 'b.xlsx'" and f.hint == "did you mean 'data'?"


def test_parquet(tmp_path):
    pytest.importorskip("pyarrow")
    FRAME.to_parquet(tmp_path / "p.parquet")
    s = session(tmp_path)
    note_of(s, 'load "p.parquet"')
    pd.testing.assert_frame_equal(s.catalog.tables["p"].frame, FRAME)


@pytest.mark.parametrize("suffix, module", [(".xlsx", "openpyxl"), (".parquet", "pyarrow")])
def test_a_missing_reader_says_which_package_to_get(tmp_path, monkeypatch, suffix, module):
    (tmp_path / f"x{suffix}").write_bytes(b"not read")

    def missing(*_, **__):
        raise ImportError(f"Missing optional dependency '{module}'.")

    monkeypatch.setattr(data_tables.pd, "ExcelFile", missing)     # the loader's pandas
    monkeypatch.setattr(data_tables.pd, "read_parquet", missing)
    f = failure_of(session(tmp_path), f'load "x{suffix}"')
    assert f"needs the package '{module}'" in f.message
    assert f.hint == f'install the optional readers: pip install "permq[files]" (or just: pip ' \
                     f'install {module})'


def test_the_files_extra_is_declared_and_documented():
    import tomllib

    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    files = " ".join(project["optional-dependencies"]["files"])
    assert "openpyxl" in files and "pyarrow" in files
    assert 'permq[files]' in (ROOT / "README.md").read_text()
    assert set(data_tables.NEEDS) == {".parquet", ".xlsx", ".xls"}
