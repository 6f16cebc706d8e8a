"""Terminal text for the headless commands (rich tables), kept apart from the commands' logic.
"""
