"""The plugin's own options and hooks, driven through MkDocs' config loading."""
from pathlib import Path

import pytest
from mkdocs.config import load_config
from mkdocs.exceptions import PluginError

from .conftest import DEMO_AS_OF, REPO


@pytest.fixture
def configured(monkeypatch):
    """configured(**options) -> (config, plugin); the plugin's temporary page folder is removed after."""
    plugins = []

    def make(**options):
        monkeypatch.delenv("RECORDKIT_RECORDS", raising=False)
        monkeypatch.setenv("RECORDKIT_AS_OF", DEMO_AS_OF.isoformat())
        monkeypatch.chdir(REPO)
        config = load_config(str(REPO / "mkdocs.yml"))
        plugin = config.plugins["recordkit"]
        plugin.config.update(options)
        plugins.append(plugin)
        return config, plugin
    yield make
    for plugin in plugins:
        plugin.on_post_build(config=None)


def test_due_soon_days_option_becomes_a_local_rule(configured):
    config, plugin = configured(due_soon_days={"replace": 200})
    plugin.on_config(config)
    rules = plugin.page_text("rules.md")
    assert "200 days" in rules and "plugins.recordkit.due&#95;soon&#95;days" in rules


def test_due_soon_days_rejects_an_unknown_task(configured):
    config, plugin = configured(due_soon_days={"paint": 3})
    with pytest.raises(PluginError, match="unknown task 'paint'"):
        plugin.on_config(config)


def test_serve_watches_the_records_folder(configured):
    config, plugin = configured()
    plugin.on_config(config)

    class Server:
        watched: list[str] = []

        def watch(self, path):
            self.watched.append(path)

    server = plugin.on_serve(Server(), config=config, builder=None)
    assert [Path(p).resolve() for p in server.watched] == [REPO / "records"]


def test_generated_unit_pages_stay_out_of_the_nav(configured):
    # Material renders the whole nav into every page: units in the nav would make builds quadratic.
    config, plugin = configured()
    plugin.on_config(config)
    pages = [p for p in plugin.pages.values() if not p.static]
    assert all(not p.in_nav for p in pages if p.src_uri.count("/") == 2)
    assert all(p.in_nav for p in pages if p.src_uri.count("/") < 2)


def test_a_build_fills_every_part_and_lets_the_records_go(configured, tmp_path):
    from mkdocs.commands.build import build

    config, plugin = configured()
    config.site_dir = str(tmp_path / "site")
    build(config)
    assert plugin.pages == {}   # pages are made on demand; nothing is kept (or spooled) after the build
    for page in (tmp_path / "site").rglob("*.html"):
        assert "rk-part-" not in page.read_text(), page   # every marker was replaced by its HTML
    unit = (tmp_path / "site/properties/tansy-house/flat-1.html").read_text()
    assert 'id="device-bed-1-smoke"' in unit and "<svg" in unit
