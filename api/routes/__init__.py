"""One thin router module per resource; equipment and rigs share the CRUD builder in ``crud``."""
