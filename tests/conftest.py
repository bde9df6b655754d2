"""Shared test settings: hypothesis runs without per-example deadlines (CI machines are slow)."""

from hypothesis import HealthCheck, settings

settings.register_profile(
    "flatpact", deadline=None, suppress_health_check=[HealthCheck.too_slow], print_blob=True
)
settings.load_profile("flatpact")
