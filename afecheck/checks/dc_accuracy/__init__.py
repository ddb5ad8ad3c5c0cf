"""DC-accuracy rules that judge a sensor itself (its self-heating)."""
