"""What the editor shows, computed without widgets: the session (ledger, history, loadout), form values, rows, previews.
"""
