"""The physics package exposes its topic modules, and every name in their __all__ exists."""

import physics


def test_all_lists_the_topic_modules():
    expected = {"battery", "buoyancy_engine", "currents", "drag", "fouling", "glide", "lift",
                "propulsion", "seawater"}
    assert expected <= set(physics.__all__)  # mission/states are added by the coordinator
    for name in expected:
        module = getattr(physics, name)
        for public in module.__all__:
            assert hasattr(module, public), f"{name}.{public} listed in __all__ but missing"
