"""Multi-step interactions the App runs (open/save, edit, compare, journal restore), kept out of app.py.
"""
