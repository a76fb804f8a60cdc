"""A plugin module that cannot be imported: it needs a package that is not installed."""

import rigbench_fake_dependency_that_is_not_installed  # noqa: F401


class NeverSeen:
    pass
