"""Stored equipment and rigs: one thin route module per kind over the shared CRUD builder, and the rules that tie rigs to equipment."""
