"""The built zip installs like a user's download and brings its own core.

Runs first, in a fresh user directory (run.py), so the install below is the
real ``package_install_files`` path a drag-and-drop takes.
"""

import os
import sys

import bpy

import conftest

OPERATORS = ("write_plan", "remove_plan", "use_active_bone", "find_rig_controls",  # the blocking pass
             "bake_follow_through", "remove_follow_through", "describe_chain",  # follow-through
             "check_body_arc", "keep_body_on_arc", "remove_body_arc", "edit_body_map",  # the body in the air
             "check_jump", "go_to_finding", "clear_check",  # the checker
             "check_export", "split_clips",  # game output
             "find_arm_bones", "place_arm_swing", "check_arm_swing", "retime_arm_swing",
             "remove_arm_swing")  # arm swing
#: Operators that only read and report; every other one changes data and must be undoable.
READ_ONLY = ("check_body_arc", "check_arm_swing")


def test_installed_from_the_zip_into_the_user_directory():
    assert conftest.STATE["installed_now"], "the zip was not installed by this process"
    mod = sys.modules[conftest.MODULE]
    assert os.path.realpath(mod.__file__).startswith(os.path.realpath(os.environ["BLENDER_USER_RESOURCES"]))


def test_core_is_vendored_and_plans_inside_blender():
    from importlib import import_module
    mod = sys.modules[conftest.MODULE]
    core = import_module(conftest.MODULE + ".core")
    planner = import_module(conftest.MODULE + ".core.plan.planner")
    goals = import_module(conftest.MODULE + ".core.plan.goals")
    assert os.path.dirname(core.__file__).startswith(os.path.dirname(mod.__file__))
    plan = planner.plan_jump(goals.JumpGoals(height=0.4))
    # Projectile motion: a 0.4 m apex rise needs v0 = sqrt(2 g h) (physics law).
    assert abs(plan.hops[0].takeoff_speed_m_s - (2 * 9.80665 * 0.4) ** 0.5) < 1e-9


def test_operators_panel_and_settings_are_registered():
    for name in OPERATORS:
        assert name in dir(bpy.ops.leapwright), name
    assert "leapwright_plan" in bpy.types.Scene.bl_rna.properties
    panel = bpy.types.LEAPWRIGHT_PT_plan
    assert panel.bl_space_type == "VIEW_3D" and panel.bl_region_type == "UI"
    assert panel.bl_category == "Leapwright"


def test_every_data_changing_operator_can_be_undone():
    mod = sys.modules[conftest.MODULE]
    ops = [c for c in mod.all_classes() if issubclass(c, bpy.types.Operator)]
    assert sorted(c.bl_idname for c in ops) == sorted("leapwright." + n for n in OPERATORS)
    for cls in ops:
        if cls.bl_idname.split(".", 1)[1] in READ_ONLY:
            assert "REGISTER" in cls.bl_options, cls.bl_idname
        else:  # it changes scene or animation data
            assert {"REGISTER", "UNDO"} <= set(cls.bl_options), cls.bl_idname


def test_unregister_and_enable_again_in_the_same_process():
    import addon_utils
    addon_utils.disable(conftest.MODULE, default_set=False)
    assert "leapwright" not in bpy.types.Scene.bl_rna.properties
    addon_utils.enable(conftest.MODULE, default_set=True)
    assert "leapwright_plan" in bpy.types.Scene.bl_rna.properties
