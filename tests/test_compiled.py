"""Compiled templates are kept in the user's own cache folder, one folder per set of compile settings."""
from __future__ import annotations

import stat

import jinja2

from recordkit.render.compiled import keep_compiled


def test_compiled_templates_are_kept_per_user_and_per_settings(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))
    templates = tmp_path / "templates"
    templates.mkdir()
    (templates / "page.html").write_text("<b>{{ name }}</b>\n")

    def env(escape: bool) -> jinja2.Environment:
        return keep_compiled(jinja2.Environment(loader=jinja2.FileSystemLoader(templates), autoescape=escape))

    assert env(True).get_template("page.html").render(name="<x>") == "<b>&lt;x&gt;</b>"
    home = tmp_path / "cache" / "recordkit" / "templates"
    assert stat.S_IMODE(home.stat().st_mode) == 0o700  # others cannot plant compiled code here
    (escaping,) = home.iterdir()
    assert len(list(escaping.iterdir())) == 1  # the compiled template, kept
    # The same template under other settings compiles differently: a folder of its own, not the other's code.
    assert env(False).get_template("page.html").render(name="<x>") == "<b><x></b>"
    assert len(list(home.iterdir())) == 2
    assert env(True).get_template("page.html").render(name="<x>") == "<b>&lt;x&gt;</b>"  # (from the cache)
