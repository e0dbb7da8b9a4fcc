"""Counter CSV files: the column of readings is found by its header, else the last numeric column."""

import pytest

from fieldbudget.drafts.readings import readings_from_csv
from fieldbudget.errors import InputError


def test_header_names_the_frequency_column():
    text = "index,timestamp,Frequency (Hz),gate\n1,10:00:01,100.5,1\n2,10:00:02,100.7,1\n"
    assert readings_from_csv(text) == (100.5, 100.7)


def test_no_header_takes_last_numeric_column_and_semicolons():
    assert readings_from_csv("1;100.5\n2;100.7\n") == (100.5, 100.7)


def test_bytes_with_bom_and_named_column():
    data = "\ufeffa,b\n1,2\n3,4\n".encode("utf-8")
    assert readings_from_csv(data, column="a") == (1.0, 3.0)


def test_errors_name_the_line_or_column():
    with pytest.raises(InputError, match="line 3"):
        readings_from_csv("f_Hz\n1\nx\n")
    with pytest.raises(InputError, match="one of the file's columns"):
        readings_from_csv("a,b\n1,2\n", column="c")
    with pytest.raises(InputError):
        readings_from_csv("")
