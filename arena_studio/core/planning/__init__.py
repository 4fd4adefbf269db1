"""Planning team goals: the goal set, assigning agents to targets, and par times.

``goal_set`` enumerates every team goal as a multi-hot vector with weights; ``assignment``
solves min-sum and bottleneck assignments; ``partime`` gives each goal's lower bound on the
time to success and who goes where. Imports ``scene`` and ``geometry``.
"""
