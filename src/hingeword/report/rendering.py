"""Rendering: the jinja2 environment (a teacher's template folder over the bundled
``hingeword/templates``) and :func:`render` of one template with one context.
"""

from __future__ import annotations

import re
import shlex
from pathlib import Path

import jinja2
from markupsafe import Markup, escape

from ..errors import HingewordError


def environment(template_dir: str | Path | None = None) -> jinja2.Environment:
    """The jinja2 environment: teacher overrides in ``template_dir`` first, then the package's."""
    loaders: list[jinja2.BaseLoader] = []
    if template_dir is not None:
        if not Path(template_dir).is_dir():
            raise HingewordError(f"template folder not found: {template_dir}")
        loaders.append(jinja2.FileSystemLoader(str(template_dir)))
    loaders.append(jinja2.PackageLoader("hingeword", "templates"))
    env = jinja2.Environment(loader=jinja2.ChoiceLoader(loaders), autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)
    env.filters["arg"] = lambda v: shlex.quote(str(v))  # a class or term name as one shell argument
    env.filters["nobreak"] = nobreak
    return env


_HYPHENATED = re.compile(r"\S*-\S*")


def nobreak(text) -> Markup:
    """Escaped text whose hyphenated words ("evening-b2", "2026-spring") never wrap at the hyphen."""
    out, pos = [], 0
    text = str(text)
    for m in _HYPHENATED.finditer(text):
        out.append(escape(text[pos:m.start()]))
        out.append(Markup('<span class="nowrap">') + escape(m.group(0)) + Markup("</span>"))
        pos = m.end()
    out.append(escape(text[pos:]))
    return Markup("").join(out)


def render(template: str, context: dict, *, template_dir: str | Path | None = None,
           env: jinja2.Environment | None = None) -> str:
    """Render one template with ``context``.

    :raises HingewordError: a teacher's template is broken or uses a name the context lacks.
    """
    env = env or environment(template_dir)
    try:
        return env.get_template(template).render(**context)
    except (jinja2.TemplateSyntaxError, jinja2.UndefinedError) as exc:
        where = f" ({exc.filename}, line {exc.lineno})" if isinstance(exc, jinja2.TemplateSyntaxError) else ""
        raise HingewordError(f"template '{template}' cannot be rendered{where}: {exc.message}") from None
