"""Items to and from CSV, for spreadsheets: units in the headers, nothing half-imported.

A header cell is a column name with its unit in brackets (`mass [lb]`,
`x [in]`, `xx [lb*in**2]`); the unit is parsed once per column and every cell
below it is a bare number. The work is split by concept:

- csv_cells: what a cell may hold (columns, ASCII numbers, verbatim text,
  the formula guard, RFC 4180 quoting);
- csv_write: ledger -> CSV;
- csv_read: CSV text -> located cells; csv_import: cells -> ledger;
- csv_check: the built ledger read back through the ledger reader.

This module keeps the names the commands and tests import. See docs/exchange.md.
"""

from __future__ import annotations

from steelyard.io.exchange.csv_cells import COLUMNS, REQUIRED, number_text, protect, unprotect
from steelyard.io.exchange.csv_check import check_ledger
from steelyard.io.exchange.csv_import import SHAPE_MATCH_RTOL, CsvImport, read_csv, read_csv_file
from steelyard.io.exchange.csv_write import ledger_to_csv

__all__ = ["COLUMNS", "REQUIRED", "SHAPE_MATCH_RTOL", "CsvImport", "check_ledger", "ledger_to_csv", "number_text",
           "protect", "read_csv", "read_csv_file", "unprotect"]
