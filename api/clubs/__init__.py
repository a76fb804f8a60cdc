"""Club pages: public queries, bodies, CSV, the server-rendered page with its templates, pictures and static files."""
