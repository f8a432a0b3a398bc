"""The walk along the glass, and every answer drawn from it: trace, loss, live, impact, locate."""
