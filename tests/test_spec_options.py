"""Tests of the spec command-line options (selector.cli.spec_options) on a tiny command.

The command below exists only in this test: it echoes the spec it receives, so the
decorator is tested apart from ``check`` and ``seek``. Specs here are invented.
"""

from __future__ import annotations

import json

import click
import pytest
from click.testing import CliRunner

from selector.cli import RailwrightGroup
from selector.cli.spec_options import spec_options
from selector.spec.rail_spec import OPTION_FOR_KEY, RailSpec, load_spec
from selector.spec.spec_summary import describe_spec, spec_to_dict


@click.group(cls=RailwrightGroup)
def tool() -> None:
    """A stand-in for the railwright group."""


@tool.command("echo")
@spec_options
@click.option("--top", type=int, default=3, help="A command option of its own.")
def echo_command(spec: RailSpec, top: int) -> None:
    """Print the spec as JSON."""
    click.echo(json.dumps({"top": top, **spec_to_dict(spec)}, sort_keys=True))


QUICK = (
    "echo --target 5V --tolerance 3% --supply-min 11V --supply-max 13V "
    "--load-min 0 --load-max 10mA --ambient-min 0 --ambient-max 50"
).split()

RAIL_TOML = """\
[rail]
target = "1.9 V"
tolerance = "50 mV"
[supply]
min = "4.5 V"
max = "5.5 V"
[load]
min = "1 kohm"
max = "10 kohm"
[ambient]
min = -20
max = 70
[resistor]
series = "E12"
[search]
families = "led, signal"
"""


@pytest.fixture
def runner(tmp_path, monkeypatch) -> CliRunner:
    monkeypatch.chdir(tmp_path)
    (tmp_path / "rail.toml").write_text(RAIL_TOML, encoding="utf-8")
    return CliRunner()


def run(runner: CliRunner, args: list[str]):
    return runner.invoke(tool, args, catch_exceptions=False)


def test_quick_search_needs_no_file(runner):
    result = run(runner, QUICK)
    assert result.exit_code == 0, result.output
    echoed = json.loads(result.stdout)
    assert echoed["top"] == 3
    assert echoed["target_v"] == 5.0 and echoed["tolerance_v"] == 0.15
    assert echoed["supply_min_v"] == 11.0 and echoed["supply_max_v"] == 13.0
    assert (echoed["load_kind"], echoed["load_min"], echoed["load_max"]) == ("current", 0.0, 0.01)
    assert (echoed["ambient_min_c"], echoed["ambient_max_c"]) == (0.0, 50.0)


def test_the_commands_own_options_still_arrive(runner):
    assert json.loads(run(runner, [*QUICK, "--top", "7"]).stdout)["top"] == 7


def test_file_then_options_override(runner):
    result = run(runner, ["echo", "--spec", "rail.toml", "--supply-max", "6 V", "--families", "zener"])
    assert result.exit_code == 0, result.output
    echoed = json.loads(result.stdout)
    assert echoed["supply_max_v"] == 6.0
    assert echoed["families"] == ["zener"]
    assert echoed["resistor_series"] == "E12"
    assert (echoed["load_kind"], echoed["load_min"], echoed["load_max"]) == ("resistance", 1e3, 1e4)


def test_file_value_equals_the_same_value_by_option(runner):
    by_file = load_spec("rail.toml")
    by_options = json.loads(
        run(
            runner,
            "echo --target 1.9V --tolerance 50mV --supply-min 4.5V --supply-max 5.5V "
            "--load-min 1kohm --load-max 10kohm --ambient-min -20 --ambient-max 70 "
            "--series e12 --families led,signal".split(),
        ).stdout
    )
    assert by_options == {"top": 3, **spec_to_dict(by_file)}


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (["--supply-min", "5mA"], "Error: --supply-min: '5mA' is a current; a voltage is expected\n"),
        (["--supply-max", "10V"], "Error: --supply-min: 11 V is above --supply-max (10 V)\n"),
        (["--tolerance", "3 mA"],
         "Error: --tolerance: '3 mA' is a current; a voltage or a percentage is expected\n"),
        (["--ambient-max", "200"], "Error: --ambient-max: 200 °C is outside -55 °C … 150 °C\n"),
        (["--series", "E7"],
         "Error: --series: unknown series 'E7'; known: E3, E6, E12, E24, E48, E96, E192\n"),
        (["--max-parts", "40"], "Error: --max-parts: 40 must be from 1 to 12\n"),
        (["--resistor", "0.1"], "Error: --resistor: 100 mΩ is outside 1 Ω … 10 MΩ\n"),
        (["--min-margin", "150%"], "Error: --min-margin: 150 % must be from 0 % and below 100 %\n"),
        (["--load-kind", "resistance"],
         "Error: --load-max: '10mA' is a current but --load-kind says resistance\n"),
        (["--list", "bench", "--statuses", "banned"],
         "Error: --statuses: 'banned' parts may never be designed in; "
         "usable: approved, conditional, evaluating\n"),
        (["--families", "zener,thyristor"],
         "Error: --families: unknown family 'thyristor'; known: signal, rectifier, schottky, led, zener\n"),
    ],
)
def test_option_errors_name_the_option_and_exit_2(runner, extra, message):
    # A bad option value is a usage error, as click's own (DESIGN §4: 2 usage).
    result = run(runner, [*QUICK, *extra])
    assert result.exit_code == 2
    assert result.stdout == ""
    assert result.stderr == message


def test_file_errors_name_the_file_and_key(runner, tmp_path):
    (tmp_path / "bad.toml").write_text(RAIL_TOML.replace('min = "4.5 V"', 'min = "5 mA"'), encoding="utf-8")
    result = run(runner, ["echo", "--spec", "bad.toml"])
    assert result.exit_code == 1
    assert result.stderr == "Error: bad.toml: [supply] min: '5 mA' is a current; a voltage is expected\n"


def test_missing_keys_are_one_line(runner):
    result = run(runner, ["echo", "--target", "5V"])
    assert result.exit_code == 2
    assert result.stderr == (
        "Error: missing --tolerance, --supply-min, --supply-max, --load-min, --load-max, "
        "--ambient-min, --ambient-max (or give them in a --spec FILE)\n"
    )


def test_missing_spec_file(runner):
    result = run(runner, ["echo", "--spec", "absent.toml"])
    assert (result.exit_code, result.stderr) == (1, "Error: absent.toml: no such file\n")


def test_help_lists_every_spec_option_with_an_example(runner):
    result = run(runner, ["echo", "--help"])
    assert result.exit_code == 0
    for option in ["--spec", *OPTION_FOR_KEY.values()]:
        assert f"  {option} " in result.output
    assert "Example: --spec rail.toml" in result.output
    assert "[V]" in result.output and "[°C]" in result.output and "[Ω]" in result.output


def test_spec_to_dict_is_plain_json_of_every_field():
    spec = load_spec(
        None,
        {
            "rail.target": "5 V", "rail.tolerance": "2 %", "supply.min": "9 V", "supply.max": "15 V",
            "load.min": 0, "load.max": "5 mA", "ambient.min": 0, "ambient.max": 40,
            "search.list": "bench", "search.statuses": "approved", "search.families": "zener",
        },
    )  # fmt: skip
    echoed = spec_to_dict(spec)
    assert list(echoed) == list(RailSpec.__dataclass_fields__)
    assert echoed["families"] == ["zener"] and echoed["statuses"] == ["approved"]
    assert json.loads(json.dumps(echoed)) == echoed


def test_describe_spec_current_load():
    spec = load_spec(
        None,
        {
            "rail.target": "5 V", "rail.tolerance": "3 %", "supply.min": "11 V", "supply.max": "13 V",
            "load.min": 0, "load.max": "10 mA", "ambient.min": 0, "ambient.max": 50,
        },
    )  # fmt: skip
    assert describe_spec(spec) == [
        "Rail: 5 V ± 150 mV (3 %)",
        "Supply: 11 V … 13 V (nominal 12 V)",
        "Load: 0 A … 10 mA",
        "Ambient: 0 °C … 50 °C",
        "Series resistor: E24 from 1 Ω to 10 MΩ, ±1 %, 250 mW rating",
        "Stacks: up to 3 parts of all families from the whole library; "
        "least current 0 A, least margin 0 %",
    ]


def test_describe_spec_resistive_load_fixed_resistor_list_and_caution():
    spec = load_spec(
        None,
        {
            "rail.target": "24 V", "rail.tolerance": "0.5 V", "supply.min": "48 V",
            "supply.max": "72 V", "supply.nominal": "60 V", "load.min": "2.2 kohm",
            "load.max": "4k7", "ambient.min": "-40", "ambient.max": "85",
            "resistor.fixed": "1k5", "resistor.tolerance": "5 %", "resistor.rating": "2 W",
            "search.max_parts": 4, "search.families": "zener", "search.list": "bench",
            "search.min_current": "2 mA", "search.min_margin": "20 %",
        },
    )  # fmt: skip
    assert describe_spec(spec) == [
        "Rail: 24 V ± 500 mV (2.083 %)",
        "Supply: 48 V … 72 V (nominal 60 V)",
        "Load: 2.2 kΩ … 4.7 kΩ (resistive)",
        "Ambient: -40 °C … 85 °C",
        "Series resistor: fixed 1.5 kΩ, ±5 %, 2 W rating",
        "Stacks: up to 4 parts of zener from list 'bench' (approved, conditional); "
        "least current 2 mA, least margin 20 %",
        "Caution: the supply reaches 72 V, above the 60 V DC ES1 limit of IEC 62368-1: "
        "follow local codes and licensed practice for hazardous voltages",
    ]
