"""Other formats for scripts and spreadsheets: CSV, JSON exports, the rollup and diff JSON records.
"""
