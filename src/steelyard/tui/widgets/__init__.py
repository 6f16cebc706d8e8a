"""Widgets drawn on screens: the ledger table, totals, envelope panel and chart, log view.
"""
