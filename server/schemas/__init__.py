"""Pydantic schemas of the JSON API, one module per resource."""
