"""One module per sub-command (`cmd_<name>.py`): NAME, HELP, add_arguments(parser), run(args) -> int.

Discovered by steelyard.cli.main; shared loading and error handling live in steelyard.cli.loading.
"""
