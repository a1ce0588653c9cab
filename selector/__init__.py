"""railwright: diode and zener stack rails and references, proven over worst-case corners.

The importable package is ``selector``; the console script is ``railwright``.
For notebooks: ``from selector import seek, check`` — :func:`seek` searches a library for
a rail and returns the shortlist as a pandas DataFrame plus a summary; :func:`check`
proves one stack at every worst-case corner (:mod:`selector.api`).
"""

__version__ = "0.1.0"

__all__ = ["__version__", "seek", "check", "choose_resistors"]


def __getattr__(name: str):
    # Imported on first use so that ``import selector`` stays light for the CLI.
    if name in ("seek", "check"):
        from selector import api

        return getattr(api, name)
    if name == "choose_resistors":
        from selector.search.resistor_choice import choose_resistors

        return choose_resistors
    raise AttributeError(f"module 'selector' has no attribute {name!r}")
