"""Published constants, each with its source on the line.

"from memory" marks a value recalled without a source at hand; "common practice"
a fact of the trade. Every other figure names where it was read.
"""

STANDARD_GRAVITY = 9.80665  # m/s^2, exact by definition: 3rd CGPM 1901; ISO 80000-3
BLENDER_DEFAULT_GRAVITY = 9.81  # m/s^2, Blender's scene default (common practice)
MOON_GRAVITY = 1.62  # m/s^2, NASA Moon fact sheet
MARS_GRAVITY = 3.71  # m/s^2, NASA Mars fact sheet

GRAVITY_PRESETS = {
    "earth": STANDARD_GRAVITY,
    "moon": MOON_GRAVITY,
    "mars": MARS_GRAVITY,
}

# --- Countermovement jump, human figures used for defaults and grading -------------
CMJ_TAKEOFF_SPEED_NO_ARMS = 2.44  # m/s, Feltner et al. 1999, J Sports Sci 17:449-466 (25 volleyball players)
CMJ_TAKEOFF_SPEED_ARMS = 2.75  # m/s, Feltner et al. 1999
CMJ_DEPTH_NORMAL = 0.38  # m COM drop, Balster, Lim & Kong 2016, IJHMSS 4(4):51-60 (+-0.08)
CMJ_DEPTH_DEEP = 0.50  # m, Balster, Lim & Kong 2016 (+-0.09)
UNWEIGHTING_MIN_FORCE_SELF_CHOSEN = 0.43  # BW, PMC11208864 (2024), self-chosen depth
PEAK_SPEED_LEAD = 0.03  # s before take-off, Harman et al. 1990, Med Sci Sports Exerc 22(6):825-833
UNWEIGHTING_DURATION_RANGE = (0.30, 0.45)  # s, from memory (general CMJ literature)
BRAKING_DURATION_RANGE = (0.10, 0.25)  # s, from memory
PROPULSION_DURATION_RANGE = (0.20, 0.30)  # s, from memory
PEAK_PROPULSIVE_FORCE_RANGE = (2.0, 2.8)  # BW, from memory
PEAK_LANDING_FORCE_RANGE = (3.0, 6.0)  # BW for 0.3-0.6 m drops, from memory

# Grades: (everyday up to, athletic up to); above the second is "beyond human - stylised".
TAKEOFF_SPEED_GRADES = (2.0, 3.9)  # m/s; 2.44 untrained-ish CMJ (Feltner 1999); 3.9 elite long-jump vertical (Coh et al. 2017)
PUSH_FORCE_GRADES = (2.5, 4.5)  # BW, from memory (CMJ 2.0-2.8 BW; sprint/long-jump take-offs several BW)
LANDING_FORCE_GRADES = (4.0, 8.0)  # BW, from memory (3-6 BW for 0.3-0.6 m drops; stiff landings higher)
UNWEIGHTING_FORCE_FLOOR_GRADES = (0.3, 0.0)  # BW minimum: above 0.3 everyday; down to 0 athletic (free fall bound)

# --- Friction ---------------------------------------------------------------------
SHOE_FRICTION_COEFFICIENT = 0.6  # dimensionless, rubber sole on dry floor, from memory (typ. 0.5-1.0)

# --- Body proportions ---------------------------------------------------------------
STANDING_COM_HEIGHT = 1.0  # m, about 0.56 of a 1.78 m adult's stature, from memory

# --- Segment lengths, used only to tell rig joints apart (not for masses) ------------
# Fractions of stature, Drillis & Contini 1966 as drawn in Winter 2009, Fig. 4.1, from memory.
UPPER_ARM_LENGTH_FRACTION = 0.186  # shoulder to elbow, from memory
FOREARM_LENGTH_FRACTION = 0.146  # elbow to wrist, from memory
HAND_LENGTH_FRACTION = 0.108  # wrist to fingertip, from memory

# --- Arm swing (core/arm_swing.py, core/swing_timing.py) ------------------------------
ARM_SWING_HEIGHT_GAIN = 0.086  # m, CMJ with vs without arms, Lees, Vanrenterghem & De Clercq 2004, J Biomech 37:1929-1940
ARM_SWING_POSITION_SHARE = 0.28  # of that gain from a higher take-off position, Lees et al. 2004
ARM_SWING_SPEED_SHARE = 0.72  # of that gain from a faster take-off, Lees et al. 2004
ARM_SWING_HEIGHT_GAIN_RATIO = 0.38  # +38% jump height with arms, Vaverka et al. 2016, J Hum Kinet 53:41-50
UPSWING_START_SHARE = 0.76  # upswing starts at ~76% of the total jump duration, Vaverka et al. 2016
DE_LEVA_MALE_ARM_SEGMENTS = ((0.0271, 0.5772), (0.0162, 0.4574), (0.0061, 0.7900))  # (mass, COM from proximal) upper arm, forearm, hand, de Leva 1996, J Biomech 29(9):1223-1230
STANDING_COM_STATURE_FRACTION = 0.56  # standing COM height / stature, from memory (as on STANDING_COM_HEIGHT)
ARM_SWING_WORK_RATIO = 3.40  # -, extra push energy per unit arm-lift work; calibrated in core/arm_swing.py to Feltner et al. 1999 (2.44 -> 2.75 m/s) (derived)
