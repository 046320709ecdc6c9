"""A quoted CSV field may hold line breaks; problems after it still name the line their
row starts on."""

import numpy as np
import pyarrow as pa
import pyarrow.csv as pcsv
import pytest

from webapp.imports._csvlines import _lines_by_reader, _quotes_pair_up, record_lines

HEADER = "timestamp,metric,host,value\n"
GOOD = "2026-11-30T08:00:00Z,checkout.requests,api-1,1450\n"
QUOTED = '2026-11-30T08:01:00Z,checkout.requests,"api-1\nrack 4",1450\n'  # lines 2-3
BAD_STAMP = "30/11/2026 8am,checkout.requests,api-1,1450\n"


def test_quoted_newline_then_bad_timestamp_names_its_line(rejected):
    problems = rejected(HEADER + QUOTED + GOOD + BAD_STAMP)
    assert len(problems) == 1
    assert problems[0].startswith("upload.csv, line 5, column 'timestamp': '30/11/2026 8am'")


def test_blank_lines_inside_and_after_a_quoted_field_are_counted(rejected):
    spread = '2026-11-30T08:01:00Z,checkout.requests,"api-1\n\n\nrack 4",1450\n'  # lines 2-5
    problems = rejected(HEADER + spread + "\n" + GOOD.replace("1450", "fast"))
    assert problems[0].startswith("upload.csv, line 7, column 'value': 'fast' is not a number")


def test_a_bad_cell_inside_a_multi_line_row_names_the_line_the_row_starts_on(rejected):
    text = HEADER + GOOD + QUOTED.replace("1450", "fast")
    assert rejected(text)[0].startswith("upload.csv, line 3, column 'value'")


def test_windows_line_ends_and_doubled_quotes(rejected):
    quoted = '2026-11-30T08:01:00Z,checkout.requests,"api ""1""\r\nrack 4",1450\r\n'
    text = (HEADER + quoted + GOOD + BAD_STAMP).replace("\n", "\r\n").replace("\r\r", "\r")
    assert rejected(text)[0].startswith("upload.csv, line 5, column 'timestamp'")


def test_a_quote_inside_an_unquoted_field_is_read_as_a_character(rejected):
    inch = '2026-11-30T08:00:00Z,checkout.requests,rack 5",1450\n'  # literal quote, line 2
    problems = rejected(HEADER + inch + QUOTED + BAD_STAMP)
    assert problems[0].startswith("upload.csv, line 5, column 'timestamp'")


def test_semicolon_files_with_quoted_newlines(rejected):
    text = (HEADER + QUOTED + BAD_STAMP).replace(",", ";")
    assert rejected(text)[0].startswith("upload.csv, line 4, column 'timestamp'")


def test_duplicate_warning_after_a_quoted_newline_names_the_right_line():
    from webapp.imports import parse_bytes

    repeated = QUOTED.replace('"api-1\nrack 4"', "api-1")
    parsed = parse_bytes((HEADER + QUOTED + repeated + repeated).encode(), "upload.csv")
    assert "first repeat at line 4" in str(parsed.problems[0])


@pytest.mark.parametrize("seed", range(5))
def test_quote_counting_agrees_with_the_csv_reader_and_arrow(seed):
    """Random files of plain, quoted, multi-line and doubled-quote fields, blank lines and
    both line ends: the fast count, Python's csv reader and Arrow's reader see the same
    records."""
    rng = np.random.default_rng(seed)
    cells = ["api-1", '"api-2"', '"rack\n4"', '"say ""hi"""', '"a,b"', '""', '"x\r\n\r\ny"']
    end = "\r\n" if seed % 2 else "\n"
    lines = ["a,b,c" + end]
    for _ in range(200):
        lines.append(",".join(rng.choice(cells, 2)) + f",{rng.integers(100)}" + end)
        if rng.random() < 0.1:
            lines.append(end)
    data = "".join(lines).encode()
    raw = np.frombuffer(data, dtype=np.uint8)
    assert _quotes_pair_up(raw, np.flatnonzero(raw == ord('"')), ord(","))  # the fast path
    fast = record_lines(data, ",")
    assert fast.tolist() == _lines_by_reader(data, ",").tolist()
    assert len(fast) == pcsv.read_csv(pa.py_buffer(data)).num_rows + 1  # and the header
    assert fast[-1] < data.count(b"\n") + 1  # some records did span lines


def test_without_quotes_every_non_empty_line_is_a_record():
    data = b"a,b\n1,2\n\n3,4\r\n\r\n5,6"
    assert record_lines(data, ",").tolist() == [1, 2, 4, 6]
