"""Starter files, installed as the package data ``budget.templates`` (read by budget.resources)."""
