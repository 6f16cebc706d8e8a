"""Nothing is lost: atomic replace, the lock next to a file, the journal of unsaved edits.
"""
