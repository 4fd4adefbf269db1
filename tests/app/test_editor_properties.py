"""Properties panel: typed fields; a refused value is reported at the field, model unchanged."""

from __future__ import annotations

import math

from arena_studio.core.scene.model import Agent, Landmark, Room, Scene, Start

SCENE = Scene(
    name="props",
    rooms=(Room("hall", ((0, 0), (6, 0), (6, 4), (0, 4))),),
    landmarks=(Landmark("valve", "Valve", (6.0, 2.0), 0.5, "wall"),),
    agents=(Agent("rover", 0.25, 0.8, 2.0, Start(pose=(1.0, 1.0, 0.0))),),
)


def _enter(field, text):
    field.edit.setText(text)
    return field.commit()


def test_refused_values_leave_model_unchanged(main_window):
    win = main_window
    win.document.reset(SCENE, None)
    win.editor.set_selection([("landmarks", "valve")])
    fields = win.properties.fields
    for bad in ("-1", "0", "abc", "nan", ""):
        assert not _enter(fields["reach_radius"], bad)
        assert fields["reach_radius"].error
        assert win.document.scene == SCENE
        assert win.document.undo_stack.count() == 0
    assert not _enter(fields["id"], "rover")  # taken by the agent
    assert "already" in fields["id"].error
    assert win.document.scene == SCENE
    assert _enter(fields["reach_radius"], "0.75")
    assert not fields["reach_radius"].error
    assert win.document.scene.landmarks[0].reach_radius == 0.75
    assert win.document.undo_stack.count() == 1


def test_wall_landmark_stays_on_wall_and_heading_in_degrees(main_window):
    win = main_window
    win.document.reset(SCENE, None)
    win.editor.set_selection([("landmarks", "valve")])
    assert _enter(win.properties.fields["x"], "5.5")  # moved off the wall line...
    assert win.document.scene.landmarks[0].position == (6.0, 2.0)  # ...and put back on it
    win.editor.set_selection([("agents", "rover")])
    assert _enter(win.properties.fields["heading"], "90")
    assert math.isclose(win.document.scene.agents[0].start.pose[2], math.pi / 2)
    assert not _enter(win.properties.fields["max_speed"], "-0.5")
    assert win.document.scene.agents[0].max_speed == 0.8
    assert _enter(win.properties.fields["id"], "rover-a")
    assert win.editor.selection() == (("agents", "rover-a"),)
    win.document.undo_stack.undo()
    assert win.document.scene.agents[0].id == "rover"


def test_picked_vertex_has_coordinate_fields(main_window):
    from arena_studio.editing.tools import ToolEvent

    win = main_window
    win.document.reset(SCENE, None)
    win.editor.set_selection([("rooms", "hall")])
    assert "vertex_x" not in win.properties.fields
    win.editor.tools["tool.select"].press(ToolEvent((6.0, 4.0), tol=0.1))
    win.editor.tools["tool.select"].release(ToolEvent((6.0, 4.0), tol=0.1))
    fields = win.properties.fields
    assert fields["vertex_x"].edit.text() == "6" and fields["vertex_y"].edit.text() == "4"
    assert not _enter(fields["vertex_y"], "four")
    assert win.document.scene == SCENE
    assert _enter(fields["vertex_y"], "5.5")
    assert win.document.scene.rooms[0].outline[2] == (6.0, 5.5)


def test_centre_and_start_coordinate_fields_edit_one_axis(main_window):
    # Each x / y field changes its own axis and leaves the other alone (common practice).
    from arena_studio.core.scene.model import Circle, Obstacle

    scene = Scene(
        name="axes",
        rooms=SCENE.rooms,
        obstacles=(Obstacle("drum", circle=Circle((3.0, 2.0), 0.4)),),
        agents=SCENE.agents,
    )
    win = main_window
    win.document.reset(scene, None)
    win.editor.set_selection([("obstacles", "drum")])
    assert _enter(win.properties.fields["cx"], "3.5")
    assert _enter(win.properties.fields["cy"], "1.5")
    assert win.document.scene.obstacles[0].circle == Circle((3.5, 1.5), 0.4)
    win.editor.set_selection([("agents", "rover")])
    assert _enter(win.properties.fields["start_y"], "2.5")
    assert _enter(win.properties.fields["start_x"], "1.5")
    assert win.document.scene.agents[0].start.pose == (1.5, 2.5, 0.0)
