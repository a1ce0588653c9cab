"""Command-line options for the rail requirement, shared by ``check`` and ``seek``.

:func:`spec_options` adds ``--spec FILE`` and one text option per spec key (the names of
:data:`selector.spec.rail_spec.OPTION_FOR_KEY`), builds the :class:`~selector.spec.rail_spec.RailSpec` with
:func:`selector.spec.rail_spec.load_spec` and hands it to the command as ``spec``.
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Mapping

import click

from selector.spec.rail_spec import OPTION_FOR_KEY, load_spec, spec_warnings

#: Help text per spec key: unit and an example value.
_HELP: dict[str, tuple[str, str]] = {
    "rail.target": ("VOLTS", "Wanted rail voltage [V], e.g. '5 V'."),
    "rail.tolerance": ("PCT|VOLTS", "Allowed worst-case deviation: '3 %' of the target or a voltage, e.g. '0.1 V'."),
    "rail.min": ("VOLTS", "Least rail voltage [V], with --rail-max instead of target ± tolerance "
                 "(an asymmetric window), e.g. '4.85 V'."),
    "rail.max": ("VOLTS", "Greatest rail voltage [V], with --rail-min, e.g. '5.25 V'."),
    "rail.nominal": ("VOLTS", "Nominal rail voltage [V] for display only, inside the window, e.g. '5 V'."),
    "supply.min": ("VOLTS", "Least supply voltage [V], e.g. '11 V'."),
    "supply.max": ("VOLTS", "Greatest supply voltage [V], e.g. '13 V'."),
    "supply.nominal": ("VOLTS", "Nominal supply [V] for the nominal point (default: the midpoint), e.g. '12 V'."),
    "load.min": ("AMPS|OHMS", "Low end of the load range as written: a current [A] such as '0' or '1 mA', "
                 "or a resistance such as '2.2 kohm' (for a resistive load the larger resistance draws less)."),
    "load.max": ("AMPS|OHMS", "High end of the load range as written: a current [A] such as '10 mA', "
                 "or a resistance such as '10 kΩ'."),
    "load.kind": ("KIND", "'current' or 'resistance': how bare load numbers read (default: current, or ohms when a load value says so)."),
    "ambient.min": ("DEGC", "Least ambient temperature [°C], -55 … 150, e.g. '0' or '-40 °C'."),
    "ambient.max": ("DEGC", "Greatest ambient temperature [°C], -55 … 150, e.g. '50'."),
    "resistor.series": ("SERIES", "IEC 60063 series for the series resistor, E3 … E192 (default E24)."),
    "resistor.tolerance": ("PCT", "Series-resistor tolerance, e.g. '1 %' or 0.01 (default 1 %)."),
    "resistor.rating": ("WATTS", "Series-resistor power rating [W], e.g. '250 mW' (default 0.25 W)."),
    "resistor.fixed": ("OHMS", "Use this series resistor [Ω] instead of choosing one, 1 Ω … 10 MΩ, e.g. '4k7' or '4.7 kohm'."),
    "resistor.min": ("OHMS", "Least resistor the choice may use [Ω] (default 1 Ω), e.g. '100'."),
    "resistor.max": ("OHMS", "Greatest resistor the choice may use [Ω] (default 10 MΩ), e.g. '100 kohm'."),
    "resistor.tcr": ("PPM/K", "Series-resistor temperature coefficient, ± from 25 °C, e.g. '100 ppm/K' (default 0)."),
    "resistor.full_power_ambient": ("DEGC", "Ambient up to which the resistor may dissipate its full rating "
                                    "[°C] (default 70)."),
    "resistor.zero_power_ambient": ("DEGC", "Ambient at which the resistor's allowed power reaches 0, linear "
                                    "from the full-power ambient [°C] (default 155)."),
    "search.max_parts": ("N", "Most elements in one stack, 1 … 12 (default 3)."),
    "search.families": ("LIST", "Families the search may use, comma-separated, e.g. 'zener,signal' (default: all)."),
    "search.list": ("NAME", "Approved-parts list the search must respect (default: the whole library)."),
    "search.statuses": ("LIST", "Usable statuses on that list, e.g. 'approved,conditional' (the default)."),
    "search.min_current": ("AMPS", "Least stack current at every corner [A], e.g. '1 mA' (default 0)."),
    "search.min_margin": ("PCT", "Least dissipation margin at every corner, e.g. '20 %' or 0.2 (default 0)."),
    "search.zener_izt_limit": ("RATIO", "Most zener current as a multiple of its test current, a "
                               "feasibility limit, e.g. 5 (default: none; above 5 × izt a caution)."),
}

SPEC_OPTIONS_EPILOG = (
    "Every spec key has an option that overrides the --spec file, so a quick run needs "
    "no file, e.g.: --target 5V --tolerance 3% --supply-min 11V --supply-max 13V "
    "--load-min 0 --load-max 10mA --ambient-min 0 --ambient-max 50"
)


def _parameter_name(dotted: str) -> str:
    # Prefixed so that spec options never collide with a command's own parameters.
    return "spec_" + dotted.replace(".", "_")


def spec_options(command: Callable | None = None, *, help_for: Mapping[str, str] | None = None) -> Callable:
    """Decorate a click command callback with ``--spec`` and every spec option.

    The command receives the validated :class:`RailSpec` as the keyword argument
    ``spec``; a bad value raises :class:`selector.errors.SpecError` naming the file and
    key or the option, which the ``railwright`` group reports as one ``Error:`` line.
    ``help_for`` (``"section.key"`` → text) replaces an option's help where the key means
    something else to the command, e.g. ``@spec_options(help_for={...})``.
    """
    def decorate(callback: Callable) -> Callable:
        return _with_spec_options(callback, lambda path, overrides: {"spec": _warned(load_spec(path, overrides))},
                                  help_for or {})  # fmt: skip

    return decorate if command is None else decorate(command)


def _warned(spec):
    """The spec, after its likely slips are told on stderr."""
    for warning in spec_warnings(spec):
        click.echo(f"Warning: {warning}", err=True)
    return spec


def spec_source_options(command: Callable) -> Callable:
    """Like :func:`spec_options`, but the command reads the spec itself.

    The command receives ``spec_path`` (the ``--spec`` value or None) and
    ``spec_overrides`` (``"section.key"`` → the text of each spec option given), e.g. to
    keep the spec's source (:func:`selector.spec.spec_source.read_spec_source`) or to
    take the spec from somewhere else.
    """
    return _with_spec_options(command, lambda path, overrides: {
        "spec_path": path, "spec_overrides": {key: value for key, value in overrides.items() if value is not None}},
        {})


def _with_spec_options(command: Callable, hand_over: Callable[[str | None, dict], dict],
                       help_for: Mapping[str, str]) -> Callable:
    @functools.wraps(command)
    def with_spec(*args, **kwargs):
        spec_path = kwargs.pop("spec_path")
        overrides = {dotted: kwargs.pop(_parameter_name(dotted)) for dotted in OPTION_FOR_KEY}
        kwargs.update(hand_over(spec_path, overrides))
        return command(*args, **kwargs)

    for dotted in reversed(OPTION_FOR_KEY):
        metavar, help_text = _HELP[dotted]
        with_spec = click.option(
            OPTION_FOR_KEY[dotted],
            _parameter_name(dotted),
            metavar=metavar,
            default=None,
            help=help_for.get(dotted, help_text),
        )(with_spec)
    return click.option(
        "--spec",
        "spec_path",
        metavar="FILE",
        default=None,
        help="Rail spec TOML ([rail], [supply], [load], [ambient], [resistor], [search]); "
        "options below override its values. Example: --spec rail.toml",
    )(with_spec)
