"""Analysis of recorded episodes: events, roles, per-episode and batched metrics, diagnoses.

``metrics`` computes one episode's figures and summaries over many; ``metrics_batch`` computes
the same figures for a whole tape at once (pinned equal by tests); ``diagnosis`` says why a
failed episode failed; ``events`` and ``roles`` feed the replay. Imports ``scene``,
``geometry``, ``planning``, ``sim.observe`` and ``tape.episode``; never the tape reader's
internals.
"""
