"""``trialkit bath``: a one-off recipe for a single bath."""

from __future__ import annotations

import argparse

from trialkit.chemistry.recipe import BathSpec, make_recipe
from trialkit.commands._output import print_json
from trialkit.exceptions import ChemistryError
from trialkit.numbers import readable
from trialkit.units import to_unit


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--volume", required=True, help='bath volume, e.g. "2 L"')
    parser.add_argument("--add", action="append", default=[], metavar="NAME=AMOUNT",
                        help='an ingredient and its amount, e.g. "tetrasodium EDTA=5 %% w/v"; '
                             "repeat for more")
    parser.add_argument("--ph", type=float, default=None, help="target pH")
    parser.add_argument("--adjust-with", default=None, help="pH adjuster (catalogue name)")
    parser.add_argument("--temperature", default="25 degC", help='e.g. "25 degC"')
    parser.add_argument("--area", default=None, help='coupon area in the bath, e.g. "120 cm^2"')
    parser.add_argument("--json", action="store_true", help="print the recipe as JSON")


def _ingredients(adds: list[str]) -> tuple[tuple[str, str], ...]:
    out = []
    for item in adds:
        if "=" not in item:
            raise ChemistryError(f"--add {item!r}: write it as NAME=AMOUNT, e.g. "
                                 "\"citric acid=1 % w/v\"")
        name, amount = item.split("=", 1)
        out.append((name.strip(), amount.strip()))
    return tuple(out)


def run(args: argparse.Namespace) -> int:
    volume = to_unit(args.volume, "L")
    if args.ph is not None and not args.adjust_with:
        raise ChemistryError("--ph needs --adjust-with (the acid or base that sets the pH)")
    area = None if args.area is None else to_unit(args.area, "cm**2")
    spec = BathSpec("bath", volume, _ingredients(args.add), args.adjust_with, args.ph,
                    to_unit(args.temperature, "degC"), area_cm2=area)
    recipe = make_recipe(spec)
    if args.json:
        print_json(recipe.to_dict())
        return 0
    print(format_recipe(recipe))
    return 0


def format_recipe(recipe) -> str:
    """Plain-text recipe for the terminal."""
    lines = [f"Bath {recipe.bath}: {readable(recipe.volume_l)} L at "
             f"{readable(recipe.temperature_c)} °C"]
    for ln in recipe.lines:
        ml = "" if ln.millilitres is None else f" ({readable(ln.millilitres, 3)} mL)"
        lines.append(f"  {ln.grams:10.2f} g{ml}  {ln.name}  [{ln.basis}]")
    tgt = "" if recipe.target_ph is None else f"target pH {readable(recipe.target_ph)}, "
    lines.append(f"  {tgt}predicted pH {recipe.predicted_ph:.2f}, ionic strength "
                 f"{recipe.ionic_strength:.2f} mol/kg")
    if recipe.cost.total is not None:
        lines.append(f"  cost {recipe.cost.total:.2f} {recipe.cost.currency} "
                     f"({recipe.cost.per_l:.2f} per L)")
    lines.append(f"  capacity {recipe.capacity.g_fe_per_l:.2f} g Fe per L")
    lines.append("Steps:")
    lines += [f"  {i}. {s}" for i, s in enumerate(recipe.steps, start=1)]
    lines += [f"Note: {n}" for n in recipe.notes]
    lines.append("Cautions:")
    lines += [f"  - {c}" for c in recipe.cautions]
    return "\n".join(lines)
