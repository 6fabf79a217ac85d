"""The io stage: loaders and writers; the only code that reads files."""
__all__: list[str] = []
