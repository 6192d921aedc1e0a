"""What a fit or a budget uses unless told otherwise.

A module of its own, free of the modelling code, so that the command line's parser can show
these defaults in its help without loading the modelling libraries (which take seconds).
"""

from __future__ import annotations

#: Monthly origins of the wizard's backtest unless told otherwise.
DEFAULT_ORIGINS = 12

WEATHER_CHOICES = ("past-years", "typical")
#: The weather assumption of a budget unless told otherwise, in the window and the command
#: line alike: typical weather plus past days' departures from it. A single typical year's
#: ranges leave the weather's own spread out and held too few past months on weather-driven
#: meters (gas and chilled water held 2 and 4 of 12 on the sample campus).
DEFAULT_WEATHER = WEATHER_CHOICES[0]
#: The default in one sentence, for the window.
DEFAULT_WEATHER_REASON = (
    "The spread of past years is the default: its ranges carry the weather's own variation, "
    "and in the backtests they held the actual month totals about as often as they promise."
)
#: Simulated paths of a budget unless told otherwise.
DEFAULT_PATHS = 1000
