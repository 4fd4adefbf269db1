"""Simulation helpers: reference observations and success tests, unicycle kinematics, a
path-following controller and the scripted rollout that records demo tapes.

``observe`` is the module a simulator calls each step (bearings, coverage, goal reached);
``rollout`` drives scripted agents with ``kinematics`` and ``controller`` and writes tapes.
Imports ``scene``, ``geometry``, ``planning`` and ``tape``; never ``analysis``.
"""
