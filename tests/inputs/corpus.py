"""The bad-input corpus: every case with its expected outcome (an error class and a message fragment, or an exact result).

Three kinds of case:

- file cases: a file under ``files/`` (shipped; ``python tests/inputs/corpus.py --write``
  regenerates them from the definitions below, byte for byte), read through the API and
  through ``spinward solve`` on the command line;
- API cases: a call into ``spinward`` with bad arguments;
- CLI cases: a command line.

Expected exact results are elementary (a triangle's maximum cut is 2; a QUBO of one
variable with coefficient q has minimum min(q, 0); and so on), each stated beside its case.
"""

from __future__ import annotations

import io
import json
import sys
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

import numpy as np

HERE = Path(__file__).parent
FILES = HERE / "files"


@dataclass(frozen=True)
class Expect:
    """An error of class ``error`` whose message holds ``match``; or a result with this exact ``objective``."""

    error: str | None = None
    match: str = ""
    objective: float | None = None
    warns: str = ""  # a fragment of one of the result's warnings


@dataclass(frozen=True)
class FileCase:
    path: str  # under files/
    content: bytes
    expect: Expect
    options: dict[str, str] = field(default_factory=dict)  # read_problem keywords: form, format, weight


@dataclass(frozen=True)
class ApiCase:
    id: str
    call: Callable[[], Any]  # returns a Result (or anything solve() accepts, which is then solved)
    expect: Expect


@dataclass(frozen=True)
class CliCase:
    id: str
    argv: list[str]  # "{files}" stands for the files/ folder, "{tmp}" for a scratch folder
    code: int
    match: str
    where: str = ""  # the stream holding ``match``: stderr for code 2 (one error line), else stdout


def err(cls: str, match: str) -> Expect:
    return Expect(error=cls, match=match)


def ok(objective: float, warns: str = "") -> Expect:
    return Expect(objective=objective, warns=warns)


FFE, IE, RE = "FileFormatError", "InputError", "ResourceError"
MTX = "%%MatrixMarket matrix coordinate real general\n"
TRIANGLE = "a b\nb c\nc a\n"  # unit triangle: maximum cut 2


def _text(path: str, text: str, expect: Expect, **options: str) -> FileCase:
    return FileCase(path, text.encode("utf-8"), expect, options)


def _raw(path: str, data: bytes, expect: Expect, **options: str) -> FileCase:
    return FileCase(path, data, expect, options)


# ------------------------------------------------------------------ Matrix Market

def mtx_cases() -> list[FileCase]:
    c = _text
    return [
        c("mtx/empty.mtx", "", err(FFE, "missing the '%%MatrixMarket matrix ...' header")),
        c("mtx/no_banner.mtx", "2 2 1\n1 2 3\n", err(FFE, ":1: missing the '%%MatrixMarket")),
        c("mtx/complex.mtx", "%%MatrixMarket matrix coordinate complex general\n1 1 1\n1 1 1 0\n", err(FFE, "unsupported header")),
        c("mtx/hermitian.mtx", "%%MatrixMarket matrix coordinate real hermitian\n1 1 0\n", err(FFE, "unsupported header")),
        c("mtx/vector.mtx", "%%MatrixMarket vector coordinate real general\n1 1 0\n", err(FFE, "unsupported header")),
        c("mtx/short_banner.mtx", "%%MatrixMarket matrix coordinate real\n1 1 0\n", err(FFE, "unsupported header")),
        c("mtx/array_pattern.mtx", "%%MatrixMarket matrix array pattern general\n1 1\n", err(FFE, "cannot have the 'pattern' field")),
        c("mtx/no_size_line.mtx", MTX + "% only comments\n", err(FFE, "missing the size line")),
        c("mtx/size_two_numbers.mtx", MTX + "2 2\n1 2 3\n", err(FFE, ":2: expected 'rows cols entries'")),
        c("mtx/size_extra_number.mtx", MTX + "2 2 1 7\n1 2 3\n", err(FFE, ":2: expected 'rows cols entries'")),
        c("mtx/size_words.mtx", MTX + "two two one\n", err(FFE, ":2: expected integers")),
        c("mtx/size_float.mtx", MTX + "2.0 2 1\n1 2 3\n", err(FFE, ":2: expected integers")),
        c("mtx/negative_size.mtx", MTX + "-3 3 1\n1 2 3.0\n", err(FFE, ":2: the size line declares a negative size")),
        c("mtx/negative_entries.mtx", MTX + "3 3 -1\n", err(FFE, "negative size")),
        c("mtx/not_square.mtx", MTX + "3 4 1\n1 2 3\n", err(FFE, "a problem matrix is square, but the size line declares 3×4")),
        c("mtx/entries_beyond_file.mtx", MTX + "3 3 99999999999\n1 2 3\n", err(FFE, "more than a file of")),
        c("mtx/fewer_entries.mtx", MTX + "3 3 3\n1 2 3\n", err(FFE, "promises 3 entries, found 1")),
        c("mtx/more_entries.mtx", MTX + "3 3 1\n1 2 3\n2 3 4\n", err(FFE, "promises 1 entries, found 2")),
        c("mtx/index_zero.mtx", MTX + "3 3 1\n0 2 3\n", err(FFE, ":3: index (0, 2) outside the 3×3 matrix (indices are 1-based)")),
        c("mtx/index_beyond.mtx", MTX + "3 3 1\n1 4 3\n", err(FFE, ":3: index (1, 4) outside")),
        c("mtx/index_negative.mtx", MTX + "3 3 1\n-1 2 3\n", err(FFE, "outside the 3×3 matrix")),
        c("mtx/index_float.mtx", MTX + "3 3 1\n1.5 2 3\n", err(FFE, ":3: expected integers for 'row col'")),
        c("mtx/value_word.mtx", MTX + "3 3 1\n1 2 abc\n", err(FFE, ":3: 'abc' is not a number")),
        c("mtx/value_nan.mtx", MTX + "3 3 2\n1 2 1\n2 3 nan\n", err(FFE, ":4: 'nan' is not finite")),
        c("mtx/value_inf.mtx", MTX + "3 3 1\n1 2 inf\n", err(FFE, ":3: 'inf' is not finite")),
        c("mtx/value_minus_inf.mtx", MTX + "3 3 1\n1 2 -inf\n", err(FFE, "is not finite")),
        c("mtx/value_overflow.mtx", MTX + "3 3 1\n1 2 1e400\n", err(FFE, "'1e400' is not finite")),
        c("mtx/value_hex.mtx", MTX + "3 3 1\n1 2 0x10\n", err(FFE, "'0x10' is not a number")),
        c("mtx/value_underscore.mtx", MTX + "3 3 1\n1 2 1_000\n", err(FFE, "'1_000' is not a number")),
        c("mtx/too_many_fields.mtx", MTX + "3 3 1\n1 2 3 4\n", err(FFE, ":3: expected 3 values per entry")),
        c("mtx/too_few_fields.mtx", MTX + "3 3 1\n1 2\n", err(FFE, ":3: expected 3 values per entry")),
        c("mtx/pattern_with_value.mtx", "%%MatrixMarket matrix coordinate pattern general\n2 2 1\n1 2 5\n",
          err(FFE, "expected 2 values per entry")),
        c("mtx/integer_decimal.mtx", "%%MatrixMarket matrix coordinate integer general\n2 2 1\n1 2 1.5\n",
          err(FFE, ":3: '1.5' is not an integer (the header declares the integer field)")),
        c("mtx/integer_exponent.mtx", "%%MatrixMarket matrix coordinate integer general\n2 2 1\n1 2 1e3\n",
          err(FFE, "'1e3' is not an integer")),
        c("mtx/integer_beyond_2_53.mtx", "%%MatrixMarket matrix coordinate integer general\n2 2 1\n1 2 9007199254740993\n",
          err(FFE, ":3: the integer 9007199254740993 is beyond 2**53")),
        c("mtx/integer_beyond_int64.mtx", "%%MatrixMarket matrix coordinate integer general\n2 2 1\n1 2 -99999999999999999999\n",
          err(FFE, "beyond 2**53")),
        c("mtx/real_integer_beyond_2_53.mtx", MTX + "2 2 1\n1 2 18014398509481985\n", err(FFE, "beyond 2**53")),
        c("mtx/duplicates_beyond_2_53.mtx", "%%MatrixMarket matrix coordinate integer general\n2 2 2\n1 2 4503599627370496\n"
          "1 2 4503599627370497\n", err(IE, "duplicate entries add up to 2**53 or more")),
        c("mtx/array_too_few.mtx", "%%MatrixMarket matrix array real general\n2 2\n1\n2\n3\n", err(FFE, "expected 4 values")),
        c("mtx/array_too_many.mtx", "%%MatrixMarket matrix array real general\n1 1\n1\n2\n", err(FFE, "expected 1 values")),
        c("mtx/array_symmetric_count.mtx", "%%MatrixMarket matrix array real symmetric\n2 2\n1\n2\n", err(FFE, "expected 3 values")),
        c("mtx/array_nan.mtx", "%%MatrixMarket matrix array real general\n2 2\n1\nnan\n0\n1\n", err(FFE, ":4: 'nan' is not finite")),
        c("mtx/array_word.mtx", "%%MatrixMarket matrix array real general\n1 1\nzero\n", err(FFE, ":3: 'zero' is not a number")),
        c("mtx/array_huge.mtx", "%%MatrixMarket matrix array real general\n200000 200000\n1\n",
          err(FFE, "declares 40000000000 values, more than a file of")),
        c("mtx/array_not_square.mtx", "%%MatrixMarket matrix array real general\n2 3\n1\n2\n3\n4\n5\n6\n", err(FFE, "square")),
        _raw("mtx/latin1.mtx", (MTX + "% caf\xe9\n2 2 1\n1 2 3\n").encode("latin-1"), err(FFE, "not UTF-8 text")),
        _raw("mtx/nul_in_value.mtx", (MTX + "2 2 1\n1 2 3\x00\n").encode(), err(FFE, "is not a number")),
        c("mtx/bom.mtx", "\ufeff" + MTX + "2 2 1\n1 2 -3\n", ok(-3.0)),  # x = (1, 1): −3
        c("mtx/crlf.mtx", (MTX + "2 2 1\n1 2 -3\n").replace("\n", "\r\n"), ok(-3.0)),
        c("mtx/comment_between_entries.mtx", MTX + "2 2 2\n1 2 -3\n% a remark\n1 1 1\n", ok(-2.0)),  # x = (1, 1): 1 − 3
        c("mtx/skew_symmetric.mtx", "%%MatrixMarket matrix coordinate real skew-symmetric\n2 2 1\n2 1 5\n", ok(0.0)),  # xᵀQx = 0
        c("mtx/symmetric_pattern.mtx", "%%MatrixMarket matrix coordinate pattern symmetric\n2 2 1\n2 1\n", ok(0.0)),
        c("mtx/zero_by_zero.mtx", MTX + "0 0 0\n", ok(0.0)),  # no variables: the offset
        c("mtx/asymmetric_as_maxcut.mtx", MTX + "2 2 1\n1 2 3\n", err(IE, "adjacency matrix must be symmetric"), form="maxcut"),
        c("mtx/asymmetric_as_ising.mtx", MTX + "3 3 2\n1 2 3\n3 1 1\n", err(IE, "neither symmetric nor upper-triangular"),
          form="ising"),
        c("mtx/weight_option.mtx", MTX + "2 2 1\n1 2 3\n", err(IE, "weight='w' names an edge attribute"), weight="w"),
        c("mtx/diagonal_as_maxcut.mtx", "%%MatrixMarket matrix coordinate real symmetric\n2 2 2\n1 1 4\n2 1 2\n",
          ok(2.0, warns="self-loop"), form="maxcut"),  # one edge of weight 2, the loop never cut
    ]


# ------------------------------------------------------------------ whitespace edge lists

def edgelist_cases() -> list[FileCase]:
    c = _text
    return [
        c("edgelist/empty.txt", "", ok(0.0)),
        c("edgelist/only_comments.txt", "# nothing\n% here\n", ok(0.0)),
        c("edgelist/four_fields.txt", "1 2 3 4\n", err(FFE, ":1: expected 'u v [weight]', got 4 fields")),
        c("edgelist/weight_word.txt", "1 2 1\n2 3 heavy\n", err(FFE, ":2: weight 'heavy' is not a number")),
        c("edgelist/weight_nan.txt", "1 2 nan\n", err(FFE, ":1: weight 'nan' is not finite")),
        c("edgelist/weight_inf.txt", "1 2 1\n2 3 inf\n", err(FFE, ":2: weight 'inf' is not finite")),
        c("edgelist/weight_minus_inf.txt", "1 2 -Infinity\n", err(FFE, "is not finite")),
        c("edgelist/weight_overflow.txt", "1 2 1e999\n", err(FFE, "weight '1e999' is not finite")),
        c("edgelist/weight_hex.txt", "1 2 0x10\n", err(FFE, "weight '0x10' is not a number")),
        c("edgelist/weight_underscore.txt", "1 2 1_000\n", err(FFE, "weight '1_000' is not a number")),
        c("edgelist/weight_beyond_2_53.txt", "1 2 9007199254740993\n", err(FFE, ":1: the weight 9007199254740993 is an integer beyond 2**53")),
        c("edgelist/parallel_beyond_2_53.txt", "1 2 4503599627370496\n2 1 4503599627370497\n",
          err(IE, "parallel edges between 1 and 2 add up to 2**53 or more")),
        c("edgelist/sum_beyond_float.txt", "1 2 1e308\n2 3 1e308\n3 1 1e308\n", err(IE, "beyond float64 range")),
        c("edgelist/nul_label.txt", "a b\nb\x00x c\n", err(FFE, ":2: the label 'b\\x00x' holds the control character U+0000")),
        c("edgelist/escape_label.txt", "\x1b[31m b 1\n", err(FFE, ":1: the label '\\x1b[31m' holds the control character U+001B")),
        c("edgelist/delete_label.txt", "a\x7f b\n", err(FFE, "U+007F")),
        c("edgelist/c1_label.txt", "a b\nb c\u0085d\n", err(FFE, ":2: the label 'c\\x85d' holds the control character U+0085")),
        c("edgelist/vertical_tab_label.txt", "a\x0bb c\n", err(FFE, "U+000B")),
        _raw("edgelist/latin1.txt", "caf\xe9 b\n".encode("latin-1"), err(FFE, "not UTF-8 text")),
        c("edgelist/bom_triangle.txt", "\ufeff" + TRIANGLE, ok(2.0)),  # the BOM is no part of label 'a'
        c("edgelist/bom_numbers.txt", "\ufeff1 2\n2 3\n3 1\n", ok(2.0)),
        c("edgelist/self_loop_only.txt", "1 1 5\n", ok(0.0, warns="self-loop")),
        c("edgelist/isolated_nodes.txt", "7\n1 2 2.5\n8\n", ok(2.5)),
        c("edgelist/mixed_labels.txt", "1 a\na 1.5\n1.5 1\n", ok(2.0)),  # a triangle of string labels
        c("edgelist/parallel_edges.txt", "1 2 1.5\n2 1 2\n", ok(3.5)),  # parallel lines add up
        c("edgelist/crlf.txt", TRIANGLE.replace("\n", "\r\n"), ok(2.0)),
        c("edgelist/tabs.txt", "a\tb\nb\tc\nc\ta\n", ok(2.0)),
        c("edgelist/commas.txt", "a,b\nb,c\nc,a\n", ok(2.0)),
        c("edgelist/inline_comments.txt", "a b # first\nb c % second\nc a\n", ok(2.0)),
        c("edgelist/huge_integer_labels.txt", f"{10**30} {10**30 + 1} 4\n", ok(4.0)),
        c("edgelist/negative_weights.txt", "1 2 -1\n2 3 -1\n3 1 -1\n", ok(0.0)),  # cutting nothing is best
        c("edgelist/decimal_weights.txt", "1 2 0.1\n1 3 0.2\n1 4 0.7\n", ok(1.0)),  # fsum(0.1, 0.2, 0.7) = 1.0
        c("edgelist/weight_option.txt", "1 2 3\n", err(FFE, "an edge list has no column names"), weight="w"),
        c("edgelist/form_qubo.txt", TRIANGLE, err(IE, "holds a maxcut problem, not qubo"), form="qubo"),
        c("edgelist/unicode_labels.txt", "Zürich Genève 2\nGenève Basel 1\n", ok(3.0)),
    ]


# ------------------------------------------------------------------ CSV edge lists

def csv_cases() -> list[FileCase]:
    c = _text
    return [
        c("csv/header_only.csv", "u,v,weight\n", ok(0.0)),
        c("csv/missing_weight.csv", "u,v,weight\n1,2,1\n2,3\n", err(FFE, ":3: expected a weight in column 3, got 2 fields")),
        c("csv/unterminated_quote.csv", 'a,b,1\n"c,d,2\n', err(FFE, "malformed CSV")),
        c("csv/quoted_comma_label.csv", '"a,1",b,2\nb,c,3\n', ok(5.0)),  # a path: both edges cut
        c("csv/empty_label.csv", "1,2,1\n,2,1\n", err(FFE, ":2: an empty label")),
        c("csv/no_such_column.csv", "u,v,capacity\n1,2,3\n", err(FFE, ":1: no column named 'cost'"), weight="cost"),
        c("csv/weight_without_header.csv", "1,2,3\n", err(FFE, "no header line"), weight="cost"),
        c("csv/four_fields.csv", "1,2,3,4\n", err(FFE, ":1: expected 'u,v[,weight]', got 4 fields")),
        c("csv/weight_nan.csv", "u,v,weight\n1,2,NaN\n", err(FFE, ":2: weight 'NaN' is not finite")),
        c("csv/weight_inf.csv", "1,2,1\n2,3,inf\n", err(FFE, ":2: weight 'inf' is not finite")),
        c("csv/weight_word.csv", "u,v,weight\n1,2,3\n2,3,lots\n", err(FFE, ":3: weight 'lots' is not a number")),
        c("csv/weight_decimal_comma.csv", "1,2,1,5\n", err(FFE, "got 4 fields")),
        c("csv/weight_beyond_2_53.csv", "u,v,weight\n1,2,-9007199254740993\n", err(FFE, ":2: the weight -9007199254740993 is an integer beyond 2**53")),
        c("csv/parallel_beyond_2_53.csv", "0,1,-4503599627370496\n0,1,-4503599627370497\n", err(IE, "add up to 2**53 or more")),
        c("csv/nul_label.csv", "u,v,weight\n1,2,1\nx\x00,2,1\n", err(FFE, ":3: the label 'x\\x00' holds the control character U+0000")),
        c("csv/bell_in_quotes.csv", 'a,b\n"c\x07",b\n', err(FFE, ":2: the label 'c\\x07'")),
        c("csv/nel_at_field_end.csv", "a\u0085,b\n", err(FFE, ":1: the label 'a\\x85' holds the control character U+0085")),
        c("csv/semicolons.csv", "1;2;3\n2;3;4\n", err(FFE, ":1: one field '1;2;3': CSV fields are separated by commas")),
        c("csv/tabs.csv", "1\t2\t3\n", err(FFE, "CSV fields are separated by commas")),
        c("csv/bom_header.csv", "\ufeffsource,target,weight\n1,2,0.5\n2,3,0.25\n", ok(0.75)),
        c("csv/two_column_header.csv", "source,target\n1,2\n2,3\n3,1\n", ok(2.0)),
        c("csv/string_labels.csv", "alice,bob\ncarol,bob\n", ok(2.0)),
        c("csv/crlf.csv", "u,v,weight\r\n1,2,2\r\n2,3,3\r\n", ok(5.0)),
        c("csv/comments.csv", "# exported\nu,v,weight\n% note\n1,2,2\n2,3,3\n", ok(5.0)),
        c("csv/quoted_numbers.csv", '"1","2","3"\n', ok(3.0)),
        c("csv/spaces.csv", "1 , 2 , 3\n2 , 3 , 4\n", ok(7.0)),
        c("csv/blank_lines.csv", "1,2,3\n\n\n2,3,4\n", ok(7.0)),
        c("csv/weight_by_name.csv", "u,v,capacity,cost\na,b,1,7\nb,c,1,5\n", ok(12.0), weight="cost"),
        c("csv/third_column_default.csv", "u,v,capacity,cost\na,b,1,7\nb,c,1,5\n", ok(2.0)),
        c("csv/header_missing_column.csv", "u,v,capacity,cost\na,b,1\n", err(FFE, ":2: expected a weight in column 4"),
          weight="cost"),
        c("csv/form_ising.csv", "1,2,3\n", err(IE, "holds a maxcut problem, not ising"), form="ising"),
        c("csv/self_loops.csv", "1,1,3\n1,2,2\n", ok(2.0, warns="self-loop")),
    ]


# ------------------------------------------------------------------ JSON documents

def _json(path: str, doc: Any, expect: Expect, **options: str) -> FileCase:
    return _text(path, json.dumps(doc), expect, **options)


def json_cases() -> list[FileCase]:
    j, c = _json, _text
    big = 2**53 + 1
    return [
        c("json/empty.json", "", err(FFE, ":1: malformed JSON")),
        j("json/array.json", [], err(FFE, "a problem document is a JSON object, got an array")),
        c("json/null.json", "null", err(FFE, "got null")),
        c("json/number.json", "42", err(FFE, "got a number (42)")),
        j("json/no_matrix_or_terms.json", {"form": "qubo"}, err(FFE, "exactly one of 'matrix'")),
        j("json/matrix_and_terms.json", {"form": "qubo", "matrix": [[1]], "terms": []}, err(FFE, "exactly one of 'matrix'")),
        j("json/matrix_not_square.json", {"form": "qubo", "matrix": [[1, 2], [3]]}, err(FFE, "matrix[1]: has 1 entries")),
        j("json/matrix_row_number.json", {"form": "qubo", "matrix": [1, 2]}, err(FFE, "matrix[0]: expected a row")),
        j("json/matrix_string.json", {"form": "qubo", "matrix": [["1"]]}, err(FFE, "matrix[0][0]: expected a number, got a string")),
        j("json/matrix_null.json", {"form": "qubo", "matrix": [[None]]}, err(FFE, "matrix[0][0]: expected a number, got null")),
        j("json/matrix_bool.json", {"form": "qubo", "matrix": [[True]]}, err(FFE, "got a boolean (true)")),
        j("json/matrix_nested.json", {"form": "qubo", "matrix": [[[1]]]}, err(FFE, "got an array")),
        j("json/terms_pair.json", {"form": "qubo", "terms": [[0, 1]]}, err(FFE, "terms[0]: a coefficient is required")),
        j("json/terms_four.json", {"form": "qubo", "terms": [[0, 1, 2, 3]]}, err(FFE, "terms[0]: an entry is [i, j, value], got 4")),
        j("json/terms_float_label.json", {"form": "qubo", "terms": [[0.5, 1, 2]]}, err(FFE, "terms[0][0]: a label is an integer")),
        j("json/terms_null_label.json", {"form": "qubo", "terms": [[None, 1, 2]]}, err(FFE, "got null")),
        j("json/terms_object_label.json", {"form": "qubo", "terms": [[{}, 1, 2]]}, err(FFE, "got an object")),
        j("json/terms_string_value.json", {"form": "qubo", "terms": [[0, 1, "2"]]}, err(FFE, "terms[0][2]: expected a number")),
        c("json/terms_nan.json", '{"form": "qubo", "terms": [[0, 1, NaN]]}', err(FFE, "terms[0][2]: nan is not a finite number")),
        c("json/terms_infinity.json", '{"form": "qubo", "terms": [[0, 1, -Infinity]]}', err(FFE, "is not a finite number")),
        c("json/terms_overflow.json", '{"form": "qubo", "terms": [[0, 1, 1e400]]}', err(FFE, "inf is not a finite number")),
        j("json/terms_beyond_2_53.json", {"form": "qubo", "terms": [[0, 1, big]]}, err(FFE, "terms[0][2]: the integer 9007199254740993")),
        j("json/terms_repeat_beyond_2_53.json", {"form": "qubo", "terms": [[0, 1, 2**52], [0, 1, 2**52 + 1]]},
          err(FFE, "terms[1]: this entry repeats an earlier one")),
        j("json/terms_unknown_label.json", {"form": "qubo", "labels": ["a"], "terms": [["a", "b", 1]]},
          err(FFE, "terms[0][1]: label 'b' is not among 'labels'")),
        j("json/labels_count.json", {"form": "qubo", "matrix": [[1, 0], [0, 1]], "labels": ["a"]}, err(IE, "1 labels for 2 variables")),
        j("json/labels_repeated.json", {"form": "qubo", "matrix": [[1, 0], [0, 1]], "labels": ["a", "a"]},
          err(IE, "labels must be distinct")),
        j("json/form_unknown.json", {"form": "potts"}, err(FFE, "form: must be one of 'qubo', 'ising', 'maxcut'")),
        j("json/form_missing.json", {"edges": []}, err(FFE, "form: must be one of")),
        j("json/schema_wrong.json", {"schema": "other/2", "form": "maxcut"}, err(FFE, "schema: must be 'spinward.problem/1'")),
        j("json/unknown_field.json", {"form": "maxcut", "edges": [], "weights": []}, err(FFE, "weights: unknown field in a maxcut")),
        j("json/field_three.json", {"form": "ising", "fields": [["a", 1, 2]]}, err(FFE, "fields[0]: a field is a [label, h] pair")),
        j("json/field_label_bool.json", {"form": "ising", "fields": [[True, 1]]}, err(FFE, "fields[0][0]: a label")),
        j("json/field_repeat_beyond.json", {"form": "ising", "fields": [["a", 2**52], ["a", 2**52 + 1]]},
          err(FFE, "fields[1][1]: this entry repeats")),
        j("json/coupling_self.json", {"form": "ising", "couplings": [["a", "a", 3], ["a", "b", 1]]},
          ok(-1.0, warns="self-coupling")),  # −J s_a s_b with J = 1: −1 when aligned
        j("json/edges_mixed.json", {"form": "maxcut", "edges": [[0, 1, 2.5], [1, 2]]}, err(FFE, "edges[1]: a weight is required")),
        j("json/edge_weight_bool.json", {"form": "maxcut", "edges": [[0, 1, False]]}, err(FFE, "edges[0][2]: expected a number")),
        j("json/nodes_object.json", {"form": "maxcut", "nodes": {"a": 1}}, err(FFE, "nodes: expected an array, got an object")),
        j("json/label_too_deep.json", {"form": "maxcut", "nodes": [_nested(20)]}, err(FFE, "nests deeper than 16 arrays")),
        c("json/deeply_nested.json", "[" * 100_000 + "]" * 100_000, err(FFE, "nests too deeply")),
        j("json/nul_label.json", {"form": "maxcut", "nodes": ["a\x00b"]}, err(FFE, "nodes[0]: the label 'a\\x00b' holds")),
        j("json/escape_label.json", {"form": "maxcut", "edges": [["\x1b", "b"]]}, err(FFE, "edges[0][0]: the label")),
        _raw("json/latin1.json", '{"form": "maxcut", "nodes": ["caf\xe9"]}'.encode("latin-1"), err(FFE, "not UTF-8")),
        c("json/bom.json", "\ufeff" + json.dumps({"form": "maxcut", "edges": [["a", "b", 4]]}), ok(4.0)),
        c("json/truncated.json", '{"form": "qubo",\n "terms": [[0, 1, 2]', err(FFE, ":2: malformed JSON")),
        c("json/trailing_data.json", '{"form": "maxcut"} x', err(FFE, "malformed JSON (Extra data)")),
        j("json/offset_string.json", {"form": "qubo", "terms": [], "offset": "1"}, err(FFE, "offset: expected a number, got a string")),
        j("json/offset_beyond.json", {"form": "ising", "offset": -big}, err(FFE, "offset: the integer -9007199254740993")),
        j("json/wrong_form.json", {"form": "maxcut", "edges": []}, err(IE, "holds a maxcut problem, not qubo"), form="qubo"),
        j("json/weight_option.json", {"form": "maxcut", "edges": []}, err(IE, "weight='w' names"), weight="w"),
        j("json/empty_ising.json", {"form": "ising", "offset": 2.5}, ok(2.5)),
    ]


def _nested(depth: int) -> Any:
    value: Any = "x"
    for _ in range(depth):
        value = [value]
    return value


# ------------------------------------------------------------------ GraphML

GRAPHML = '<?xml version="1.0" encoding="UTF-8"?>\n<graphml xmlns="http://graphml.graphdrawing.org/xmlns">\n{keys}{body}</graphml>\n'


def _graphml(body: str, keys: str = "", directed: bool = False) -> str:
    graph = f'<graph edgedefault="{"directed" if directed else "undirected"}">{body}</graph>\n'
    return GRAPHML.format(keys=keys, body=graph)


def _weight_key(kind: str, name: str = "weight") -> str:
    return f'<key id="d0" for="edge" attr.name="{name}" attr.type="{kind}"/>\n'


def _edge(u: str, v: str, value: str | None = None) -> str:
    data = f'<data key="d0">{value}</data>' if value is not None else ""
    return f'<edge source="{u}" target="{v}">{data}</edge>'


TRI_NODES = '<node id="a"/><node id="b"/><node id="c"/>'


def graphml_cases() -> list[FileCase]:
    c = _text
    tri = TRI_NODES + _edge("a", "b") + _edge("b", "c") + _edge("c", "a")
    return [
        c("graphml/empty.graphml", "", err(FFE, "malformed GraphML")),
        c("graphml/not_xml.graphml", "this is not xml\n", err(FFE, "malformed GraphML")),
        c("graphml/doctype.graphml", '<?xml version="1.0"?>\n<!DOCTYPE lolz [<!ENTITY lol "lol">]>\n<graphml/>\n',
          err(FFE, ":2: GraphML with a DOCTYPE or ENTITY declaration is refused")),
        c("graphml/entity_only.graphml", '<?xml version="1.0"?>\n\n<!ENTITY x "y">\n<graphml/>\n', err(FFE, ":3: GraphML with a DOCTYPE")),
        c("graphml/two_graphs.graphml", GRAPHML.format(keys="", body='<graph edgedefault="undirected"><node id="a"/></graph>'
                                                                   '<graph edgedefault="undirected"><node id="b"/></graph>'),
          err(FFE, "holds 2 graphs")),
        c("graphml/three_graphs.graphml", GRAPHML.format(keys="", body='<graph edgedefault="undirected"/>' * 3),
          err(FFE, "holds 3 graphs")),
        c("graphml/nested_graph.graphml", _graphml('<node id="a"><graph edgedefault="undirected"><node id="a::b"/></graph></node>'),
          err(FFE, "holds 2 graphs")),
        c("graphml/directed.graphml", _graphml(tri, directed=True), err(FFE, "the graph is directed")),
        c("graphml/weight_string.graphml", _graphml(TRI_NODES + _edge("a", "b", "heavy"), _weight_key("string")),
          err(IE, "weight of edge ('a', 'b') must be a real number, got 'heavy'")),
        c("graphml/weight_nan.graphml", _graphml(TRI_NODES + _edge("a", "b", "NaN"), _weight_key("double")),
          err(IE, "weight of edge ('a', 'b') is nan")),
        c("graphml/weight_inf.graphml", _graphml(TRI_NODES + _edge("a", "b", "INF"), _weight_key("double")), err(IE, "is inf")),
        c("graphml/weight_beyond_2_53.graphml", _graphml(TRI_NODES + _edge("a", "b", "9007199254740993"), _weight_key("long")),
          err(IE, "weight of edge ('a', 'b') = 9007199254740993 is beyond 2**53")),
        c("graphml/weight_bool.graphml", _graphml(TRI_NODES + _edge("a", "b", "true"), _weight_key("boolean")),
          err(IE, "must be a real number, got True")),
        c("graphml/weight_not_number.graphml", _graphml(TRI_NODES + _edge("a", "b", "x"), _weight_key("double")),
          err(FFE, "malformed GraphML")),
        c("graphml/control_char_xml.graphml", _graphml('<node id="a&#1;"/>'), err(FFE, "malformed GraphML")),
        c("graphml/newline_in_id.graphml", _graphml('<node id="a&#10;b"/>'), err(FFE, "node id 'a\\nb' holds the control character U+000A")),
        c("graphml/hyperedge.graphml", _graphml(TRI_NODES + '<hyperedge><endpoint node="a"/><endpoint node="b"/></hyperedge>'),
          err(FFE, "malformed GraphML")),
        c("graphml/no_graph.graphml", GRAPHML.format(keys="", body=""), err(FFE, "malformed GraphML")),
        c("graphml/undeclared_node.graphml", _graphml('<node id="a"/>' + _edge("a", "b")), ok(1.0)),
        c("graphml/other_attribute.graphml", _graphml(TRI_NODES + _edge("a", "b", "3") + _edge("b", "c", "1"),
                                                      _weight_key("double", "capacity")), ok(2.0, warns="'capacity'")),
        c("graphml/weight_by_name.graphml", _graphml(TRI_NODES + _edge("a", "b", "3") + _edge("b", "c", "1"),
                                                     _weight_key("double", "capacity")), ok(4.0), weight="capacity"),
        c("graphml/self_loop.graphml", _graphml(TRI_NODES + _edge("a", "a") + _edge("a", "b")), ok(1.0, warns="self-loop")),
        c("graphml/parallel_edges.graphml", _graphml(TRI_NODES + _edge("a", "b", "2") + _edge("a", "b", "3"),
                                                     _weight_key("double")), ok(5.0)),
        _raw("graphml/latin1.graphml", _graphml('<node id="caf\xe9"/>').encode("latin-1"), err(FFE, "not UTF-8")),
        c("graphml/bom.graphml", "\ufeff" + _graphml(tri), ok(2.0)),
        c("graphml/no_nodes.graphml", _graphml(""), ok(0.0)),
        c("graphml/form_qubo.graphml", _graphml(tri), err(IE, "holds a maxcut problem, not qubo"), form="qubo"),
    ]


# ------------------------------------------------------------------ .npy and .npz

def _npy(array: np.ndarray) -> bytes:
    buf = io.BytesIO()
    np.save(buf, array, allow_pickle=True)
    return buf.getvalue()


def _npy_header(shape: tuple[int, ...], descr: str = "<f8", payload: bytes = b"\0" * 16) -> bytes:
    buf = io.BytesIO()
    np.lib.format.write_array_header_1_0(buf, {"descr": descr, "fortran_order": False, "shape": shape})
    return buf.getvalue() + payload


def _zip(members: dict[str, bytes], compress: bool = True) -> bytes:
    """A zip archive with fixed timestamps, so the bytes never change."""
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED if compress else zipfile.ZIP_STORED) as z:
        for name, data in members.items():
            z.writestr(zipfile.ZipInfo(name, date_time=(1980, 1, 1, 0, 0, 0)), data)
    return buf.getvalue()


def _npz(**arrays: Any) -> bytes:
    return _zip({f"{k}.npy": v if isinstance(v, bytes) else _npy(np.asarray(v)) for k, v in arrays.items()})


def _sparse_npz(bad_index: bool = False) -> bytes:
    indices = np.array([1, 5 if bad_index else 0], dtype=np.int32)
    return _npz(format=np.array("csr"), shape=np.array([2, 2]), data=np.array([-3.0, -3.0]),
                indices=indices, indptr=np.array([0, 1, 2], dtype=np.int32))


def numpy_cases() -> list[FileCase]:
    r = _raw
    eye = np.eye(2)
    return [
        r("npy/empty.npy", b"", err(FFE, "cannot read as .npy without pickle")),
        r("npy/random_bytes.npy", bytes(range(256)) * 4, err(FFE, "cannot read as .npy")),
        r("npy/object_array.npy", _npy(np.array([{"a": 1}], dtype=object)), err(FFE, "holds Python objects")),
        r("npy/vector.npy", _npy(np.ones(4)), err(IE, "Q must be square, got shape (4,)")),
        r("npy/cube.npy", _npy(np.zeros((2, 2, 2))), err(IE, "Q must be square, got shape (2, 2, 2)")),
        r("npy/rectangle.npy", _npy(np.zeros((2, 3))), err(IE, "Q must be square, got shape (2, 3)")),
        r("npy/scalar.npy", _npy(np.float64(3.0)), err(IE, "must be square, got shape ()")),
        r("npy/complex.npy", _npy(np.eye(2, dtype=complex)), err(IE, "Q is complex")),
        r("npy/strings.npy", _npy(np.array([["a", "b"], ["c", "d"]])), err(IE, "Q must be numeric, got dtype <U1")),
        r("npy/datetimes.npy", _npy(np.zeros((2, 2), dtype="datetime64[s]")), err(IE, "must be numeric")),
        r("npy/structured.npy", _npy(np.zeros((2, 2), dtype=[("a", "<f8")])), err(IE, "must be numeric")),
        r("npy/nan.npy", _npy(np.array([[0.0, np.nan], [0.0, 0.0]])), err(IE, "Q[0, 1] is nan")),
        r("npy/beyond_2_53.npy", _npy(np.array([[0, 2**53 + 1], [0, 0]], dtype=np.int64)), err(IE, "Q[0, 1] = 9007199254740993")),
        r("npy/declares_huge.npy", _npy_header((200_000, 200_000)), err(FFE, "declares a 200000×200000 array of float64")),
        r("npy/truncated.npy", _npy_header((3, 3)), err(FFE, "declares 72 bytes of data, but the file holds 16")),
        r("npy/bool.npy", _npy(np.array([[True, False], [False, True]])), ok(0.0)),  # diagonal 1s: x = 0 is best
        r("npy/float16.npy", _npy(np.array([[1.0, -3.0], [0.0, 1.0]], dtype=np.float16)), ok(-1.0)),  # x = (1, 1)
        r("npy/fortran.npy", _npy(np.asfortranarray(np.array([[1.0, -3.0], [0.0, 1.0]]))), ok(-1.0)),
        r("npz/empty.npz", b"", err(FFE, "cannot read as .npz without pickle")),
        r("npz/not_zip.npz", b"PK\x03\x04 not really", err(FFE, "cannot read as .npz")),
        r("npz/text_member.npz", _zip({"notes.txt": b"hello"}), err(FFE, "the archive member 'notes.txt' is not a .npy array")),
        r("npz/offset_vector.npz", _npz(Q=eye, offset=np.ones(3)), err(FFE, "'offset' must be one number (shape ()), got shape (3,)")),
        r("npz/offset_string.npz", _npz(Q=eye, offset=np.array("one")), err(FFE, "'offset' must be a number, got an array of dtype <U3")),
        r("npz/offset_nan.npz", _npz(Q=eye, offset=np.nan), err(IE, "offset is nan")),
        r("npz/offset_beyond_2_53.npz", _npz(Q=eye, offset=np.int64(2**53 + 1)), err(IE, "offset = 9007199254740993 is beyond 2**53")),
        r("npz/Q_and_J.npz", _npz(Q=eye, J=eye), err(FFE, "holds both 'Q' and 'J'")),
        r("npz/Q_and_h.npz", _npz(Q=eye, h=np.ones(2)), err(FFE, "'h' belongs with 'J'")),
        r("npz/unknown_array.npz", _npz(Q=eye, weights=np.ones(2)), err(FFE, "unknown array(s) 'weights'")),
        r("npz/h_wrong_length.npz", _npz(J=np.zeros((3, 3)), h=np.ones(2)), err(IE, "h must have shape (3,), got (2,)")),
        r("npz/J_rectangle.npz", _npz(J=np.zeros((2, 3))), err(IE, "J must be square")),
        r("npz/declares_huge.npz", _npz(Q=_npy_header((200_000, 200_000))), err(FFE, "array 'Q' declares a 200000×200000 array")),
        r("npz/declares_huge_vector.npz", _npz(J=eye, h=_npy_header((2**40,))), err(FFE, "array 'h' declares a 1099511627776 array")),
        r("npz/object_member.npz", _npz(Q=np.array([[{}]], dtype=object)), err(FFE, "holds Python objects")),
        r("npz/matrix_and_Q.npz", _npz(matrix=eye, Q=eye), err(FFE, "'matrix' comes alone")),
        r("npz/no_arrays.npz", _zip({}), err(FFE, "expected arrays 'Q' (QUBO) or 'J' and 'h' (Ising)")),
        r("npz/sparse.npz", _sparse_npz(), ok(-6.0)),  # Q = [[0, −3], [−3, 0]]: x = (1, 1) gives −6
        r("npz/sparse_bad_index.npz", _sparse_npz(bad_index=True), err(FFE, "cannot read as .npz")),
        r("npz/Q_as_ising.npz", _npz(Q=eye), err(FFE, "for form 'ising'"), form="ising"),
        r("npz/Q_beyond_2_53.npz", _npz(Q=np.array([[0, -(2**53) - 1], [0, 0]], dtype=np.int64)), err(IE, "Q[0, 1] = -9007199254740993")),
        r("npz/ising.npz", _npz(J=np.array([[0.0, 2.0], [0.0, 0.0]]), h=np.array([1.0, 0.0]), offset=0.5), ok(-2.5)),  # −2 − 1 + 0.5
    ]


def file_cases() -> list[FileCase]:
    return mtx_cases() + edgelist_cases() + csv_cases() + json_cases() + graphml_cases() + numpy_cases()


def write_files() -> None:
    """Write every file case under files/ (the shipped corpus is exactly this)."""
    for case in file_cases():
        p = FILES / case.path
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_bytes(case.content)


if __name__ == "__main__":
    if sys.argv[1:] == ["--write"]:
        write_files()
        print(f"wrote {len(file_cases())} files under {FILES}")
