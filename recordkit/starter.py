"""A starter records folder for `recordkit init`: a property file whose every field is explained, a
policy file of commented examples, and a .gitignore. Text only; the CLI writes it (never over a file)."""
from __future__ import annotations


import jinja2

from .fields import ID_PATTERN
from .render.labels import STARTER
from .rules import coverage_set_names
from .yamltree import quoted

PLACEHOLDER_ID = "my-property"
PLACEHOLDER_NAME = "My property"
PLACEHOLDER_ADDRESS = "1 Example Street, Example Town"

_env = jinja2.Environment(loader=jinja2.FileSystemLoader(STARTER), autoescape=False, keep_trailing_newline=True,
                          undefined=jinja2.StrictUndefined)


class StarterError(ValueError):
    """A value the starter files cannot hold; the message says which and why."""


def yaml_text(value: str) -> str:
    """Free text as a YAML scalar that reads back as exactly this text."""
    return quoted(value)


def starter_files(property_id: str | None, name: str | None, address: str | None, rules: str,
                  unit_id: str = "home", unit_name: str = "Home") -> dict[str, str]:
    """File name -> text. Missing values become placeholders that say CHANGE ME."""
    property_id = property_id or PLACEHOLDER_ID
    for what, ident in (("property id", property_id), ("unit id", unit_id)):
        if not ID_PATTERN.match(ident):
            raise StarterError(f"{what} {ident!r}: use lowercase a-z, 0-9 and hyphens (e.g. 'elm-court')")
    if rules not in coverage_set_names():
        raise StarterError(f"rules {rules!r}: choose one of {', '.join(coverage_set_names())}")
    for what, text in (("name", name), ("address", address), ("unit name", unit_name)):
        if text is not None and ("\n" in text or "\r" in text):
            raise StarterError(f"{what}: one line of text, please")
    values = dict(property_id=property_id, name=yaml_text(name or PLACEHOLDER_NAME),
                  address=yaml_text(address or PLACEHOLDER_ADDRESS), unit_id=unit_id,
                  unit_name=yaml_text(unit_name), placeholder_name=not name, placeholder_address=not address,
                  rules=rules)
    return {f"{property_id}.yaml": _env.get_template("property.yaml.j2").render(values),
            "policy.yaml": _env.get_template("policy.yaml.j2").render(values),
            ".gitignore": (STARTER / "gitignore").read_text(encoding="utf-8")}
