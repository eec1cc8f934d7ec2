"""Plausibility limits: the one place that says how large an input may be.

Every reader, command option and study check takes its bound from here, so a
limit is stated once and worded the same everywhere. The bounds are wide:
they catch unit mistakes and typing slips (a mass in grams, a speed in m/h),
not unusual vehicles. Values are common practice unless a source is named.
"""

from __future__ import annotations

#: largest vehicle mass [kg] accepted anywhere (a heavy road train is ~ 60 t)
MAX_MASS_KG = 100_000.0
#: highest speed accepted from a user's speed file, GPS track or steady:<speed> [km/h]:
#: above the top speed of any road vehicle (common practice: the fastest road cars
#: reach about 490 km/h, from memory)
MAX_USER_SPEED_KMH = 500.0
#: largest speed [km/h] of a coast-down interval or a range sweep
MAX_TEST_SPEED_KMH = 400.0
#: largest |acceleration| accepted in a user's trace on its final time grid [m/s²]:
#: about 5 g (49 m/s²), the hardest braking of race cars (about 5 g with downforce,
#: from memory), rounded up to 50 so that a trace braking at exactly 5 g passes;
#: road vehicles stay near 1 g, so only a logging glitch (0 to 300 km/h in 1 s is
#: 83 m/s²) or a unit mistake gets there
MAX_USER_ACCEL_MS2 = 50.0
#: largest engine or motor shaft speed [rpm]
MAX_SHAFT_SPEED_RPM = 100_000.0
#: most Monte Carlo draws a study may ask for
MAX_DRAWS = 200_000
#: largest repeat count of a profile expression (``udds*N``)
MAX_REPEAT = 1000
#: largest absolute road grade [-] (30 %) taken from elevation data
MAX_GRADE_FRACTION = 0.30
#: memory one profile or one batch may take [bytes]; larger requests are refused up
#: front with this budget in the message
MEMORY_BUDGET_BYTES = 4 * 2 ** 30
