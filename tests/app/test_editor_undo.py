"""Property test: any sequence of edits, undone completely, gives back the original scene;
redone completely, gives back the edited one (scenes compare by value)."""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from arena_studio.core.scene.model import Landmark, Room, Scene
from arena_studio.editing.tools import ToolEvent

coord = st.floats(min_value=-5, max_value=15, allow_nan=False).map(lambda v: round(v, 2))
size = st.floats(min_value=0.5, max_value=6).map(lambda v: round(v, 2))
edit = st.one_of(
    st.tuples(st.just("room"), coord, coord, size, size),
    st.tuples(st.just("obstacle"), coord, coord, size),
    st.tuples(st.just("landmark"), coord, coord),
    st.tuples(st.just("start"), coord, coord, coord, coord),
    st.tuples(st.just("move"), st.integers(0, 20), coord, coord),
    st.tuples(st.just("vertex"), st.integers(0, 20), st.integers(0, 5), coord, coord),
    st.tuples(st.just("delete"), st.integers(0, 20)),
    st.tuples(st.just("family"), st.integers(1, 3)),
    st.tuples(st.just("rule"), st.sampled_from(["all_at_end", "all_at_once", "all_visited"])),
    st.tuples(st.just("nudge"), st.integers(-2, 2), st.integers(-2, 2), st.booleans()),
    st.tuples(st.just("reach"), st.integers(0, 20), st.sampled_from(["0.3", "-1", "x", "1.25"])),
    st.tuples(st.just("goal"), st.lists(st.integers(0, 20), min_size=1, max_size=3)),
    st.tuples(st.just("insert"), st.integers(0, 20)),
    st.tuples(st.just("dropvertex"), st.integers(0, 20), st.integers(0, 5)),
)

START = Scene(
    name="start",
    rooms=(Room("hall", ((0, 0), (8, 0), (8, 5), (0, 5))),),
    landmarks=(Landmark("a", "A", (8.0, 2.0), 0.5, "wall"),),
)


def _apply(win, op) -> None:
    ed = win.editor
    tools = ed.tools
    keys = [
        k
        for g in ("rooms", "obstacles", "landmarks", "agents")
        for k in ((g, o.id) for o in getattr(ed.scene, g))
    ]
    kind = op[0]
    if kind == "room":
        _, x, y, w, h = op
        t = tools["tool.room_rect"]
        t.press(ToolEvent((x, y)))
        t.release(ToolEvent((x + w, y + h)))
    elif kind == "obstacle":
        _, x, y, r = op
        t = tools["tool.obstacle_circle"]
        t.press(ToolEvent((x, y)))
        t.release(ToolEvent((x + r, y)))
    elif kind == "landmark":
        tools["tool.landmark"].press(ToolEvent(op[1:3], tol=0.3))
    elif kind == "start":
        _, x, y, hx, hy = op
        t = tools["tool.start_pose"]
        t.press(ToolEvent((x, y)))
        t.move(ToolEvent((hx, hy)))
        t.release(ToolEvent((hx, hy)))
    elif kind in ("move", "vertex", "delete", "nudge") and keys:
        key = keys[op[1] % len(keys)] if kind != "nudge" else keys[0]
        ed.set_selection([key])
        if kind == "move":
            from arena_studio.editing import edits as edits

            ed.apply(edits.move_objects(ed.scene, [key], op[2] / 4, op[3] / 4), "Move")
        elif kind == "vertex":
            pts = __import__("arena_studio.editing.edits", fromlist=["x"]).outline_of(
                __import__("arena_studio.editing.edits", fromlist=["x"]).find(ed.scene, key)
            )
            if pts:
                sel = tools["tool.select"]
                vx, vy = pts[op[2] % len(pts)]
                sel.press(ToolEvent((vx, vy), tol=1e-6))
                sel.move(ToolEvent((vx + op[3] / 8, vy + op[4] / 8), tol=1e-6))
                sel.move(ToolEvent((op[3], op[4]), tol=1e-6))
                sel.release(ToolEvent((op[3], op[4]), tol=1e-6))
        elif kind == "delete":
            ed.delete_selection()
        else:
            ed.nudge(op[1], op[2], fine=op[3])
    elif kind == "reach" and ed.scene.landmarks:
        lm = ed.scene.landmarks[op[1] % len(ed.scene.landmarks)]
        ed.set_selection([("landmarks", lm.id)])
        field = win.properties.fields["reach_radius"]
        field.edit.setText(op[2])
        field.commit()
    elif kind == "goal" and ed.scene.landmarks:
        n = len(ed.scene.landmarks)
        ed.set_selection([("landmarks", ed.scene.landmarks[i % n].id) for i in op[1]])
        ed.set_tool("tool.goal_pick")  # the selected landmarks become the picks
        win.goals_panel.add_from_selection()
        ed.set_tool("tool.select")
    elif kind in ("insert", "dropvertex"):
        from arena_studio.editing import edits as edits

        outlined = [k for k in keys if edits.outline_of(edits.find(ed.scene, k))]
        if outlined:
            key = outlined[op[1] % len(outlined)]
            ed.set_selection([key])
            pts = edits.outline_of(edits.find(ed.scene, key))
            if kind == "insert":
                (ax, ay), (bx, by) = pts[0], pts[1]
                tools["tool.select"].double_click(
                    ToolEvent(((ax + bx) / 2, (ay + by) / 2), tol=1e-6)
                )
            else:
                ed.set_active_vertex((key, op[2] % len(pts)))
                ed.delete_selection()
    elif kind == "family":
        win.goals_panel.family_boxes[op[1]].toggle()
    elif kind == "rule":
        panel = win.goals_panel
        panel.rule.setCurrentIndex(panel.rule.findData(op[1]))


@settings(
    max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(ops=st.lists(edit, min_size=1, max_size=12))
def test_undo_all_restores_and_redo_all_replays(main_window, ops):
    win = main_window
    win.document.reset(START, None)
    win.editor.set_selection(())
    for op in ops:
        _apply(win, op)
    edited = win.document.scene
    stack = win.document.undo_stack
    while stack.canUndo():
        stack.undo()
    assert win.document.scene == START
    while stack.canRedo():
        stack.redo()
    assert win.document.scene == edited
