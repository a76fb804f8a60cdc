"""Bulk import and export of equipment: JSON lists and CSV files (one kind per file, or a ``kind`` column), a ZIP of CSVs."""
