"""Replay viewer: step through recorded episodes of a tape with overlays, events and plots.

Widgets here are standalone (each testable with hand-made :class:`Episode` objects) and are
put together by :mod:`.workspace` into the replay mode of the main window.
"""
