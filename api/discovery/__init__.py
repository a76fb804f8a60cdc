"""What the registry discovered: the calculator and plugin listings."""
