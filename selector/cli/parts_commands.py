"""``railwright parts …``: list, show, import, export and remove library parts."""

from __future__ import annotations

import click

from selector.catalog.parts_export import write_parts_csv
from selector.catalog.parts_import import ImportPlan, load_parts_csv, parse_column_settings
from selector.errors import UnknownPartError
from selector.spec.part_fields import FAMILIES
from selector.spec.units import format_quantity
from selector.views.part_sheet import format_table, list_rows, part_sheet

_FAMILY = click.Choice(FAMILIES, case_sensitive=False)
_LIST_COLUMNS = ("part", "family", "package", "at 25 °C", "tempco", "pd", "description")


def _warn(lines) -> None:
    for line in lines:
        click.echo(f"Warning: {line}", err=True)


def _report(plan: ImportPlan, label: str, dry_run: bool) -> None:
    if dry_run:
        for line in plan.lines():
            click.echo(line)
        click.echo(f"dry run, nothing written: {label}: {plan.summary()}")
    else:
        click.echo(f"imported {label}: {plan.summary()}")
        for record, changes in plan.changed:
            click.echo(f"  {record['part']}: " + "; ".join(change.describe() for change in changes))


@click.group("parts")
def parts_group() -> None:
    """The shop's parts library: forward diodes, LEDs and zeners.

    \b
    Examples:
      railwright parts list --family zener
      railwright parts show Z5V1-A
      railwright parts import shop_parts.csv --dry-run
    """


@parts_group.command("list")
@click.option("--family", "families", type=_FAMILY, multiple=True, help="Only this family (repeatable).")
@click.option("--csv", "csv_path", metavar="FILE", help="Also write the listed parts as a parts CSV ('-': stdout only).")
@click.pass_obj
def list_command(state, families: tuple[str, ...], csv_path: str | None) -> None:
    """List the library's parts, sorted by part id (numbers in ids by value: Z2V4 before
    Z10V), with a characteristic voltage at 25 °C.

    \b
    Examples:
      railwright parts list
      railwright parts list --family signal --family schottky
      railwright parts list --family zener --csv zeners.csv
    """
    records = state.library().part_records([family.lower() for family in families] or None)
    if csv_path == "-":
        write_parts_csv("-", records)
        return
    if records:
        click.echo(format_table(list_rows(records), _LIST_COLUMNS))
    else:
        click.echo("no parts" + (f" of family {', '.join(families)}" if families else ""))
    if csv_path is not None:
        count = write_parts_csv(csv_path, records)
        click.echo(f"wrote {count} parts to {csv_path}", err=True)


@parts_group.command("show")
@click.argument("part")
@click.pass_obj
def show_command(state, part: str) -> None:
    """Show every parameter of PART with its unit, derived values at 25 °C, and the saved
    designs whose latest revision uses it.

    \b
    Example:
      railwright parts show D-SIG1
    """
    from selector.catalog.saved_designs import used_by_text, where_used

    library = state.library()
    lines = part_sheet(library.part_record(part.strip()))
    users = where_used(library, part.strip())
    lines.append(("used by saved designs", used_by_text(users) if users else "none"))
    width = max(len(label) for label, _ in lines)
    for label, text in lines:
        click.echo(f"{label.ljust(width)}  {text}".rstrip())


@parts_group.command("import")
@click.argument("csv_file", metavar="FILE.csv", type=click.Path(dir_okay=False))
@click.option("--dry-run", is_flag=True, help="Show what would be added and changed; write nothing.")
@click.pass_obj
def import_command(state, csv_file: str, dry_run: bool) -> None:
    """Import a parts CSV: new parts are added, changed parts updated, in one transaction.

    Every cell is checked first; any problem is reported as FILE:LINE: column: message
    and nothing is written. Cells may be quantities such as '2.5 nA' or '500m'. A column
    the file does not have leaves that field of an existing part unchanged (a file of
    part, family and one column updates that column alone); an empty cell in a column it
    has clears the field (the part then takes the default). Every change is listed,
    field by field, and a cleared field says "clears".

    \b
    Examples:
      railwright parts import shop_parts.csv --dry-run
      railwright parts import shop_parts.csv
    """
    parts_file = load_parts_csv(csv_file)
    _warn(parts_file.warnings)
    plan = state.library().import_parts_file(parts_file, dry_run=dry_run)
    _report(plan, csv_file, dry_run)


@parts_group.command("import-cards")
@click.argument("card_file", metavar="FILE", type=click.Path(dir_okay=False))
@click.option("--family", type=_FAMILY, help="Family of every card (or give it in the ratings CSV).")
@click.option("--ratings", "ratings_csv", metavar="FILE.csv", type=click.Path(dir_okay=False),
              help="CSV keyed by part (= card name) with family, ratings and other columns.")
@click.option("--set", "settings", metavar="COLUMN=VALUE", multiple=True,
              help="A parts column for every card, e.g. pd_w=500m (repeatable).")
@click.option("--dry-run", is_flag=True, help="Show what would be added and changed; write nothing.")
@click.pass_obj
def import_cards_command(state, card_file, family, ratings_csv, settings, dry_run) -> None:
    """Import SPICE-format diode .model cards (IS N RS EG XTI TNOM; BV IBV for zeners).

    A card carries no family or ratings: give them with --family/--set or per part in a
    ratings CSV (which wins). With --family zener the card's BV, IBV, N and RS give the
    zener's datasheet points at izt_a (default IBV) and izk_a (default izt_a/10).

    \b
    Examples:
      railwright parts import-cards shop.lib --family signal --set pd_w=500m
      railwright parts import-cards zeners.lib --family zener --ratings zener_ratings.csv
    """
    from selector.catalog.model_cards import load_model_cards

    overrides: dict[str, object] = parse_column_settings(settings)
    if family:
        overrides["family"] = family.lower()
    parts_file = load_model_cards(card_file, overrides=overrides, ratings_path=ratings_csv)
    _warn(parts_file.warnings)
    plan = state.library().import_parts_file(parts_file, kind="model cards", dry_run=dry_run)
    _report(plan, card_file, dry_run)


@parts_group.command("fit")
@click.argument("part")
@click.option("--point", "points", metavar="'V @ I'", multiple=True, required=True,
              help="A datasheet point at 25 °C, e.g. '0.62 V @ 1 mA' (two or three).")
@click.option("--family", type=_FAMILY, help="Family of a new part (an existing part keeps its own).")
@click.option("--set", "settings", metavar="COLUMN=VALUE", multiple=True,
              help="Another parts column, e.g. pd_w=500m (repeatable).")
@click.option("--dry-run", is_flag=True, help="Show the fit and the change; write nothing.")
@click.pass_obj
def fit_command(state, part, points, family, settings, dry_run) -> None:
    """Fit is_a and n (and rs_ohm from three points) to forward datasheet points at 25 °C.

    The fitted values replace those of PART, or make a new part with --family and its
    ratings given by --set. The residual of every point is shown.

    \b
    Example:
      railwright parts fit D-NEW1 --family signal --set pd_w=250m \\
          --point "0.60 V @ 1 mA" --point "0.72 V @ 10 mA" --point "0.98 V @ 100 mA"
    """
    from selector.catalog.fit_records import fitted_parts_file, parse_points
    from selector.physics.fitting import fit_forward_points

    part = part.strip()
    overrides: dict[str, object] = parse_column_settings(settings)
    if family:
        overrides["family"] = family.lower()
    voltages, currents = parse_points(points)
    library = state.library()
    try:
        existing = library.part_record(part)
    except UnknownPartError:
        existing = None
    fit = fit_forward_points(voltages, currents, temperature_c=25.0)
    fitted = {"is_a": float(fit.is_a), "n": float(fit.n), "rs_ohm": float(fit.rs_ohm)}
    parts_file = fitted_parts_file(part, fitted, existing=existing, overrides=overrides, points_text=points)
    click.echo(f"fit of {part}: is_a = {fit.is_a!r} A, n = {fit.n!r}, rs_ohm = {fit.rs_ohm!r} Ω")
    for voltage, current, residual in zip(voltages, currents, fit.residuals_v, strict=True):
        point = f"{format_quantity(voltage, 'V')} @ {format_quantity(current, 'A')}"
        click.echo(f"  {point:20s} residual {residual * 1e3:+.3f} mV")
    click.echo(f"  rms residual {fit.rms_residual_v * 1e3:.3f} mV")
    _warn(parts_file.warnings)
    plan = library.import_parts_file(parts_file, kind="datasheet fit", dry_run=dry_run)
    _report(plan, part, dry_run)


@parts_group.command("export")
@click.argument("csv_file", metavar="FILE.csv")
@click.option("--family", "families", type=_FAMILY, multiple=True, help="Only this family (repeatable).")
@click.pass_obj
def export_command(state, csv_file: str, families: tuple[str, ...]) -> None:
    """Write the library's parts as a parts CSV that imports back exactly.

    \b
    Examples:
      railwright parts export backup.csv
      railwright parts export zeners.csv --family zener
    """
    records = state.library().part_records([family.lower() for family in families] or None)
    count = write_parts_csv(csv_file, records, "FILE.csv")
    if csv_file != "-":
        click.echo(f"wrote {count} parts to {csv_file}")


@parts_group.command("set")
@click.argument("part")
@click.argument("settings", nargs=-1, required=True, metavar="COLUMN=VALUE...")
@click.option("--reason", default=None, help="Why the data changes (required); kept in 'railwright history'.")
@click.option("--by", default=None, help="Who makes the change (default: your login name).")
@click.option("--dry-run", is_flag=True, help="Show the change; write nothing.")
@click.pass_obj
def set_command(state, part: str, settings: tuple[str, ...], reason, by, dry_run: bool) -> None:
    """Change some fields of PART: the import's checks of each value and of the whole part,
    one transaction, each field's old → new kept in 'railwright history' with the reason.

    Values are quantities as in a parts CSV ('2 %' is not one: vz_tol_pct takes a
    number); an empty value clears the field.

    \b
    Examples:
      railwright parts set Z5V1-A vz_tol_pct=2 --reason "new grade from lot 7"
      railwright parts set D-SIG1 tj_max_c=150 theta_ja_k_per_w=300 --reason "datasheet rev C" --by "A. Tester"
    """
    library = state.library()
    plan = library.set_fields(part.strip(), parse_column_settings(settings, "COLUMN=VALUE"), reason=reason, by=by,
                              dry_run=dry_run)  # fmt: skip
    if not plan.changed:
        click.echo(f"{part.strip()}: nothing changes (the values are the ones it has)")
        return
    for _, changes in plan.changed:
        lead = "would change" if dry_run else "changed"
        click.echo(f"{lead} {part.strip()}: " + "; ".join(change.describe() for change in changes))


@parts_group.command("remove")
@click.argument("part")
@click.option("--reason", default=None, help="Why the part goes; kept in 'railwright history'.")
@click.option("--by", default=None, help="Who removes it (default: your login name).")
@click.pass_obj
def remove_command(state, part: str, reason: str | None, by: str | None) -> None:
    """Remove PART from the library (refused while an approved list names it or a saved
    design uses it).

    \b
    Example:
      railwright parts remove D-OLD1 --reason "replaced by D-SIG2" --by "A. Tester"
    """
    library = state.library()
    library.remove_part(part.strip(), by=by, reason=reason)
    click.echo(f"removed {part.strip()} from {library.location_text()}")


COMMANDS = [parts_group]
