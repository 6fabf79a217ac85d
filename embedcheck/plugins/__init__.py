"""Integrations with other tools: a qiskit layout-stage plugin (`qiskit_layout`)."""
__all__: list[str] = []
