"""Comparisons: resolving stored rigs, the route, and the CSV table."""
