"""A plugin module that calls sys.exit while being imported."""

import sys

sys.exit("plugin gave up")
