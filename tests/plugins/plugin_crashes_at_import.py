"""A plugin module whose import raises something other than ImportError."""

raise RuntimeError("configuration file missing")
