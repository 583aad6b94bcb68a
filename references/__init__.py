"""Published reference cases, installed as the package data ``budget.references`` (read by budget.resources)."""
