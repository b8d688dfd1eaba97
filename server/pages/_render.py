"""Rendering helpers: the Jinja environment, whole page or one named block for htmx, form parsing."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated, Any

import jinja2
from fastapi import Depends, Request
from fastapi.responses import HTMLResponse
from fastapi.templating import Jinja2Templates
from markupsafe import Markup, escape
from pydantic import ValidationError

from server.errors import DomainError
from server.pages._forms import parameter_label, segment_rows
from server.security import new_csrf_token
from server.services._sorting import naturally
from server.services._validation import field_errors


def fmt_number(value: Any, digits: int = 3) -> str:
    """A number with ``digits`` significant figures and thin-space thousands; '—' for missing."""
    if value is None or value == "":
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if not isinstance(value, int | float):
        return str(value)
    if isinstance(value, float) and not math.isfinite(value):
        return "—"
    if isinstance(value, int) or float(value).is_integer() and abs(value) >= 10 ** (digits - 1):
        return f"{int(round(value)):,}".replace(",", "\u2009")
    magnitude = math.floor(math.log10(abs(value))) if value else 0
    decimals = max(0, digits - 1 - magnitude)
    return f"{value:,.{decimals}f}".replace(",", "\u2009")


def quantity(value: Any, unit: str = "", digits: int = 3) -> Markup:
    """Value plus unit, with the unit in its own span so it never wraps away from the number."""
    number = fmt_number(value, digits)
    if not unit or number == "—":
        return Markup(f'<span class="num">{escape(number)}</span>')
    return Markup(f'<span class="num">{escape(number)}</span>\u00a0<span class="unit">{escape(unit)}</span>')


def natural_sort(items: Any, attribute: str) -> list[Any]:
    """Jinja filter: ``items`` (dicts or objects) in the natural order of ``attribute`` (5x2.5 before 30x10)."""
    return naturally(items, lambda x: x[attribute] if isinstance(x, dict) else getattr(x, attribute))


def fmt_band(band: Any, digits: int = 3) -> Markup:
    """An 80 % band [lo, hi] as a small 'lo–hi' span (empty when there is none)."""
    if not band or len(band) != 2 or band[0] is None or band[1] is None:
        return Markup("")
    return Markup(f'<span class="band" title="80 % band (10th–90th percentile)">'
                  f'{escape(fmt_number(band[0], digits))}–{escape(fmt_number(band[1], digits))}</span>')


_DICT_ATTRIBUTES = frozenset(dir(dict))


class _Environment(jinja2.Environment):
    """Jinja's environment with ``a.b`` on a plain dict answered by its key at once. Jinja first asks for the
    attribute, and the AttributeError it catches for every ``entry.metrics.cruise`` costs more than the lookup
    (a fifth of the compare page's rendering); for a name that is no attribute of ``dict`` the answer is the same."""

    def getattr(self, obj: Any, attribute: str) -> Any:
        if type(obj) is dict and attribute not in _DICT_ATTRIBUTES:
            try:
                return obj[attribute]
            except KeyError:
                return self.undefined(obj=obj, name=attribute)
        return super().getattr(obj, attribute)


def make_templates(directory: Path) -> Jinja2Templates:
    # Starlette's own environment for a directory, of the class above.
    templates = Jinja2Templates(env=_Environment(loader=jinja2.FileSystemLoader(str(directory)),
                                                 autoescape=jinja2.select_autoescape()))
    templates.env.filters["num"] = fmt_number
    templates.env.filters["band"] = fmt_band
    templates.env.filters["natural_sort"] = natural_sort
    templates.env.filters["param_label"] = parameter_label
    templates.env.globals["quantity"] = quantity
    templates.env.globals["segment_rows"] = segment_rows
    templates.env.globals["csrf_token"] = csrf_token
    # Macros as a global (not a per-template import) so a single block can be rendered on its own.
    templates.env.globals["forms"] = templates.env.get_template("macros/forms.html").module
    return templates


def csrf_token(request: Request) -> str:
    """The session's CSRF token, created on first use."""
    token = request.session.get("csrf")
    if not token:
        token = new_csrf_token()
        request.session["csrf"] = token
    return str(token)


def render(
    request: Request,
    template: str,
    context: dict[str, Any],
    *,
    block: str | None = None,
    status_code: int = 200,
    headers: dict[str, str] | None = None,
) -> HTMLResponse:
    """The whole page, or only ``block`` of it when htmx asks (``Vary: HX-Request`` either way)."""
    templates: Jinja2Templates = request.app.state.templates
    ctx = {"request": request, **context}
    csrf_token(request)
    all_headers = {"Vary": "HX-Request", **(headers or {})}
    if block and request.headers.get("hx-request") == "true":
        tmpl = templates.env.get_template(template)
        html = "".join(tmpl.blocks[block](tmpl.new_context(ctx)))
        return HTMLResponse(html, status_code=status_code, headers=all_headers)
    response = templates.TemplateResponse(request, template, context, status_code=status_code, headers=all_headers)
    return response


def form_values(form: Any) -> dict[str, str]:
    """Text fields of a submitted form, stripped, without the CSRF token."""
    return {k: v.strip() for k, v in form.items() if isinstance(v, str) and k != "csrf_token"}


async def _posted_form(request: Request) -> dict[str, str]:
    return form_values(await request.form())


PostedForm = Annotated[dict[str, str], Depends(_posted_form)]
"""The submitted form's text fields. Reading the body is the only async step of a page handler: handlers are
plain ``def`` (run in the thread pool), so their database work never blocks the event loop."""


def error_lines(exc: ValidationError | DomainError) -> list[str]:
    """Human lines for a form's error list: "row N, field: message" for every problem."""
    if isinstance(exc, ValidationError):
        return [f"{e.field}: {e.message}" for e in field_errors(exc)]
    return [(f"row {e.row}, " if e.row else "") + f"{e.field}: {e.message}" for e in exc.errors] or [exc.detail]
