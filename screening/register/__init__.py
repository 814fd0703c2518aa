"""Registers of vessels: reading, rows to cases, fast validation, columnar and vectorised screening, outputs, diff."""
