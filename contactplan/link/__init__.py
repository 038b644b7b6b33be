"""Link budget, downlink rate and data volume, and the onboard recorder.

Modules: ``budget`` (free-space loss, C/N0, Eb/N0, rate choice), ``atmosphere``
(ITU-R P.676 zenith attenuation, cosecant law), ``volume`` (per-pass rate profiles
and volumes), ``windows`` (booked downlink time), ``recorder`` (fill, losses, age),
``profiles`` (the result records), ``weather`` (site clear sky, ITU-R P.618 attenuation at an
availability, sky noise) and ``forecast`` (the recorder band and Monte Carlo in weather). The main entry points are importable from here
lazily, so importing the package costs nothing on the CLI start path.
"""

_LAZY = {
    "annotate_passes": "contactplan.link.volume",
    "downlink_windows": "contactplan.link.windows",
    "simulate_recorder": "contactplan.link.recorder",
    "zenith_attenuation_db": "contactplan.link.atmosphere",
    "free_space_loss_db": "contactplan.link.budget",
}

__all__ = sorted(_LAZY)


def __getattr__(name):
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'contactplan.link' has no attribute {name!r}")
