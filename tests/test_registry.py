"""Plugin discovery: the core's own hooks, and a broken plugin that must not take the tool down."""

import pytest

from ventflux import registry


class _BrokenEntryPoint:
    name = "broken-test"
    value = "no_such_module.plugin"
    dist = None

    def load(self):
        raise ModuleNotFoundError("No module named 'no_such_module'")


def test_broken_plugin_is_skipped_with_a_warning(monkeypatch):
    real = registry.metadata.entry_points
    monkeypatch.setattr(registry.metadata, "entry_points",
                        lambda group=None: [*real(group=group), _BrokenEntryPoint()])
    registry.plugin_manager.cache_clear()
    try:
        with pytest.warns(RuntimeWarning, match="broken-test"):
            pm = registry.plugin_manager()
        assert "broken-test" in registry.BROKEN_PLUGINS
        assert any(m.name == "orifice" for m in registry.methods())
        assert pm.get_plugin("ventflux") is not None
    finally:
        registry.plugin_manager.cache_clear()
        registry.BROKEN_PLUGINS.pop("broken-test", None)


def test_unknown_fluid_model_lists_the_known_ones():
    from ventflux.errors import InputError

    with pytest.raises(InputError, match="iapws95-water"):
        registry.fluid_model("brine-that-does-not-exist")
