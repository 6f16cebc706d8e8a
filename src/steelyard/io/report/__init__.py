"""Review reports (HTML, Markdown, text): weight statement, growth, envelopes with charts, change log.
"""
