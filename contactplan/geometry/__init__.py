"""Station geometry: Earth orientation, topocentric look angles, passes, shadows."""
