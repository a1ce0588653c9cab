"""Placeholder: this command family is not built yet."""

COMMANDS: list = []
