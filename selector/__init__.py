"""railwright: diode and zener stack rails and references, proven over worst-case corners.

The importable package is ``selector``; the console script is ``railwright``.
"""

__version__ = "0.1.0"
