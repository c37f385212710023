"""The worksheet: a live terminal table of a mission (`propulsion worksheet`)."""
