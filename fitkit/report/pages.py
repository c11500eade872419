"""The one place HTML is made: jinja2 templates (package data in ``templates/``),
autoescaped, so every text that comes from a file is shown as text and never run.
"""

from __future__ import annotations

import base64
import datetime
import functools

from fitkit.version import __version__


@functools.lru_cache(maxsize=1)
def environment():
    """The jinja2 environment: package templates, autoescaping for ``.html``."""
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.PackageLoader("fitkit.report", "templates"),
        autoescape=jinja2.select_autoescape(["html"]),
        trim_blocks=True,
        lstrip_blocks=True,
        undefined=jinja2.StrictUndefined,
    )
    env.filters["data_uri"] = data_uri
    return env


def data_uri(image: bytes | None, mime: str = "image/png") -> str | None:
    """An image as a ``data:`` address, so the page stays one self-contained file."""
    if image is None:
        return None
    return f"data:{mime};base64,{base64.b64encode(image).decode('ascii')}"


def render(template: str, **context) -> str:
    """Render a template of ``fitkit/report/templates`` with the page's common facts."""
    made = datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    return environment().get_template(template).render(version=__version__, made=made, **context)
