"""Reading a rig as a body: landmarks (head, shoulders, hips, ...) found from the bone tree
or given by hand, and the way the rig faces, from its rest pose; BVH motion capture read
into joints posed by forward kinematics (bvh.py).

May import: base
"""
