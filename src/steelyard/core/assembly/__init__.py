"""Assemblies: a ledger built from other ledgers ([[assembly]] places another file).

placement.py reads the [[assembly]] table (as written) into placements and
their transforms (units, frame alignment, mirror, rotate, at); flatten.py
places a child ledger's items into the parent's frame, vectorised, giving the
one flat ledger every roll-up, check, diff and report works on. Pure: the
files themselves are read by io.ledger.tree.
"""
