"""The report stage: formatting only (JSON-ready dicts, text, Markdown, JUnit, SARIF, pictures)."""
__all__: list[str] = []
