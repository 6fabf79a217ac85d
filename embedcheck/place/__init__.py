"""The place stage (see DEVELOPERS.md for what each module holds)."""
__all__: list[str] = []
