"""The landmarks a rig can supply: joints and tips, by name, with what each stands for.

Segment tables (the body's masses) name their segments' ends with these; the rig reading
finds them in a bone tree.
"""

#: Rig landmarks a table may name. ``.L``/``.R`` pairs are resolved per side.
LANDMARKS = {
    "vertex": "top of the skull (tail of the skull bone)",
    "skull_base": "top of the neck (head of the skull bone)",
    "neck_base": "base of the neck, about C7 (head of the first bone above the chest)",
    "hip_mid": "midpoint of the two hip joints",
    "shoulder_mid": "midpoint of the two shoulder joints",
    "shoulder": "shoulder joint (head of the upper-arm bone)",
    "elbow": "elbow joint",
    "wrist": "wrist joint (head of the hand bone)",
    "knuckles": "knuckles (tail of the hand bone)",
    "hip": "hip joint (head of the thigh bone)",
    "knee": "knee joint",
    "ankle": "ankle joint (head of the foot bone)",
    "ball": "ball of the foot (tail of the foot bone)",
    "toe_tip": "tip of the toes (tail of the last bone of the leg)",
}
#: Landmarks that exist once per side.
SIDED_LANDMARKS = ("shoulder", "elbow", "wrist", "knuckles", "hip", "knee", "ankle", "ball", "toe_tip")
