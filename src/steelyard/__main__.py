import sys

from steelyard.cli.main import main

sys.exit(main())
