"""Writing the invented line's logs to disk: the pacing loop and the recorded sample feeds."""
