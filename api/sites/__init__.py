"""Observing sites: stored sites (CRUD), a club's default site, and the site of a comparison."""
