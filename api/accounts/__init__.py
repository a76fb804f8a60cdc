"""Accounts and hashed API keys: the store, the routes and the `rigbench accounts` commands."""
