"""The page templates' Jinja environment (server.pages._render.make_templates)."""

from __future__ import annotations

import jinja2
import pytest

from server.pages._render import make_templates
from server.resources import web_dir

CASES = [
    ("{{ d.a.b }}", {"d": {"a": {"b": 1}}}),
    ("{{ d.missing is undefined }}|{{ d.a.missing is undefined }}", {"d": {"a": {}}}),
    ("{{ d.items()|list }}|{{ d.get('a') }}|{{ d.keys()|list }}", {"d": {"a": 1, "items": 2, "get": 3}}),
    ("{{ d['values'] }}|{{ d.values is callable }}", {"d": {"values": [1, 2]}}),
    ("{{ d.real }}|{{ n.real }}|{{ s.upper() }}", {"d": {"real": 5}, "n": 3, "s": "x"}),
    ("{{ d.a }}", {"d": type("Sub", (dict,), {"a": "attr"})(a="key")}),  # a dict subclass keeps Jinja's order
    ("{{ d.a|e }}", {"d": {"a": "<b>"}}),
]


@pytest.mark.parametrize(("source", "context"), CASES)
def test_dict_lookups_read_as_plain_jinja_reads_them(source: str, context: dict[str, object]) -> None:
    """``a.b`` on a dict takes a shortcut to its key; every answer is the one of Jinja's own environment (keys,
    missing keys, dict methods, keys named like methods, subclasses, escaping)."""
    ours = make_templates(web_dir() / "templates").env
    theirs = jinja2.Environment(autoescape=True)
    assert type(ours) is not jinja2.Environment  # the shortcut is in use
    assert ours.autoescape  # the pages' .html templates are escaped
    assert ours.from_string(source).render(context) == theirs.from_string(source).render(context)
