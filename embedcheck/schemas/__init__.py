"""JSON Schemas of every file format and report (package data, read by `embedcheck.io.yamlfile`)."""
__all__: list[str] = []
