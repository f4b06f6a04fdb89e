"""Watching a live game's outcome log against its declared odds: anytime-valid monitoring (monitor.py), charts
(chart.py), and the command side: reading the log incrementally (log.py), the resumable state (state.py) and the
loop (run.py). Beside seeds/ in the design's list: it imports checks/, stats/, intake/, model.py and errors.py;
only api.py and cli/ import it."""
