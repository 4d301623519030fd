"""The named choices of the site model (no heavy imports: the command line reads them
to build its options before any weather is loaded)."""

from __future__ import annotations

__all__ = [
    "CELL_TEMPERATURE_MODELS",
    "SAPM_MOUNTINGS",
    "TRACKING",
    "TRANSPOSITION_MODELS",
    "WEATHER_FORMATS",
]

#: cell temperature models of :class:`gapmatch.energy.CellTemperature`
CELL_TEMPERATURE_MODELS = ("sapm", "faiman", "fixed")
#: pvlib's SAPM presets (``pvlib.temperature.TEMPERATURE_MODEL_PARAMETERS['sapm']``)
SAPM_MOUNTINGS = (
    "open_rack_glass_glass",
    "close_mount_glass_glass",
    "open_rack_glass_polymer",
    "insulated_back_glass_polymer",
)
#: mountings of :class:`gapmatch.energy.Mounting`
TRACKING = ("fixed", "single-axis")
#: sky-diffuse transposition models of the in-plane spectra
TRANSPOSITION_MODELS = ("haydavies", "perez", "isotropic")
#: weather-file readers of :func:`gapmatch.energy.read_weather`
WEATHER_FORMATS = ("tmy3", "tmy2", "epw", "pvgis", "csv")
