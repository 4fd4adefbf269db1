"""Real robots: building maps to layouts, and recorded ROS 2 runs to tapes.

::

    from arena_studio.core.robot.map_yaml import read_map
    from arena_studio.core.robot.map_trace import trace_map, map_scene
    from arena_studio.core.robot.bags import import_bags

Qt-free. PyYAML and contourpy (map import) and rosbags (bag import) are imported lazily, so
importing :mod:`arena_studio.core` never needs them.
"""
