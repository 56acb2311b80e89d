"""``motor-waveforms recipes``: list the shipped recipes and the stages, or check one recipe."""

from __future__ import annotations

import click

from ..recipe import DEFAULT_RECIPE, load_recipe, shipped_recipes, stages


def _value(v: object) -> str:
    return "(library default)" if v is None else repr(v)


@click.command("recipes")
@click.argument("recipe", required=False)
@click.option("--stages", "show_stages", is_flag=True, help="Also list every stage's parameters.")
def command(recipe: str | None, show_stages: bool) -> None:
    """List the shipped recipes and the stages they can chain, or check RECIPE.

    RECIPE is a shipped name or a TOML file; it is validated (unknown stage,
    unknown key, wrong value: the error names the file and the key) and its
    stages are printed with every parameter, defaults filled in.
    """
    if recipe is not None:
        rec = load_recipe(recipe)
        click.echo(f"recipe {rec.name!r} ({rec.source}) is valid; fingerprint {rec.fingerprint()[:16]}")
        if rec.description:
            click.echo(f"  {rec.description}")
        for name, params in rec.steps:
            click.echo(f"  [{name}]")
            for k, v in params.items():
                click.echo(f"    {k} = {_value(v)}")
        if any(rec.batch.values()):
            click.echo("  [batch] " + ", ".join(f"{k} = {v!r}" for k, v in rec.batch.items()))
        return
    click.echo("Shipped recipes:")
    for name, path in shipped_recipes().items():
        rec = load_recipe(path)
        mark = " (default)" if name == DEFAULT_RECIPE else ""
        click.echo(f"  {name}{mark}: {' -> '.join(rec.stage_names)}")
        if rec.description:
            click.echo(f"      {rec.description}")
    click.echo("\nStages:")
    for st in stages():
        needs = f" (after {', '.join(st.needs)})" if st.needs else ""
        click.echo(f"  {st.name}{needs}: {st.description}")
        if show_stages:
            for p in st.params:
                click.echo(f"      {p.name} ({p.kind}, default {_value(p.default)}): {p.doc}")
    click.echo("\nCheck a recipe file: motor-waveforms recipes FILE.toml")
