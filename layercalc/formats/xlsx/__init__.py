"""Workbooks (xlsx, OOXML): export with live formulas, import of hand-entered workbooks.

May import what `layercalc.formats` may import.
"""
