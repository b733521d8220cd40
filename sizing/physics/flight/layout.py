"""Index layout of the flat arrays that carry a flight into the compiled kernel.

The compiled functions take plain float64 arrays (numba compiles them once and
for all vehicles). Each array's slots are named here, once; the Python side
(`sizing.physics.flight.setup`) fills them, the compiled side reads them.

State vector ``y`` (19 components)
    0-2 position [m] and 3-5 velocity [m/s] in the inertial frame (Earth-centred
    for a round Earth, local for the flat Earth), 6 mass [kg], then the loss
    integrals [m/s]: 7 gravity, 8 drag (with the normal force of a body-axis
    flight), 9 steering, 10 pressure, 11 ideal delta-v (int F_vac/m dt),
    12 centrifugal (int a_cf . v_hat dt); then the attitude of a body-axis
    flight (`MODE_BODY`): 13-15 the unit body axis (nose direction) and 16-18 the
    angular velocity [rad/s], inertial axes. Outside body-axis phases the
    attitude components stand still.
Diagnostics ``diag`` (8 components)
    altitude [m], Earth-relative speed [m/s], Mach [-], dynamic pressure [Pa],
    sensed acceleration [m/s^2], delivered thrust [N], drag [N], angle of attack
    [rad] (between the body axis and the air-relative velocity; 0 outside
    body-axis phases).
"""

from __future__ import annotations

N_STATE = 19
N_MOTION = 7  # position, velocity, mass: what the right-hand side reads (plus the attitude in MODE_BODY)
Y_AXIS = 13  # 13-15 body axis (unit), MODE_BODY
Y_OMEGA = 16  # 16-18 angular velocity [rad/s], MODE_BODY
N_DIAG = 8
D_ALT, D_VREL, D_MACH, D_Q, D_ACC, D_THRUST, D_DRAG, D_ALPHA = range(N_DIAG)

# --- flight parameters ``par`` ----------------------------------------------
# One array per flight: the environment (ENV_*), the steering constants (ST_*),
# a header of table descriptors (TB_*), then the tables themselves (drag
# tables of every stage, the pitch table, the wind table, the altitude kinks).
# One array instead of many keeps the compiled calls cheap (every array argument
# costs reference counting at each call).
ENV_ROUND = 0  # 1 round Earth (inverse-square gravity), 0 flat Earth (constant g)
ENV_MU = 1  # GM [m^3/s^2]
ENV_RADIUS = 2  # Earth radius [m]
ENV_OMEGA = 3  # rotation rate [rad/s] (0: not rotating)
ENV_G_FLAT = 4  # flat-Earth gravity [m/s^2]
ENV_GRAVITY = 5  # 1 gravity on
ENV_DRAG = 6  # 1 drag on
ENV_ATM_TOP = 7  # vacuum above this altitude [m]
ENV_VACUUM_BELOW_GROUND = 8  # 1: no air below altitude 0 (targeting runs fly on underground)
ENV_ATM_MODEL = 9  # 0 US Standard Atmosphere 1976, 1 exponential
ENV_RHO0 = 10  # exponential model: density at altitude 0 [kg/m^3]
ENV_SCALE_HEIGHT = 11  # exponential model: scale height [m]
ENV_SITE_ALT = 12  # launch site altitude [m]
ENV_R0 = 13  # 13-15 site position at t = 0 [m]
ENV_UP0 = 16  # 16-18 local vertical at the site
ENV_AZ0 = 19  # 19-21 horizontal unit vector towards the launch azimuth at the site
ENV_RAIL = 22  # 22-24 rail direction (unit)
ENV_RAIL_LEN = 25  # rail length [m]
ENV_WIND_MODEL = 26  # 0 none, 1 power law, 2 table (speed vs height above site), 3 table of components
ENV_WIND_REF_SPEED = 27  # power law: speed at the reference height [m/s]
ENV_WIND_REF_HEIGHT = 28  # power law: reference height above the site [m]
ENV_WIND_EXPONENT = 29  # power law exponent [-] (0: constant wind)
ENV_WIND_TO_EAST = 30  # direction the wind blows towards: east component of a unit vector
ENV_WIND_TO_NORTH = 31  # ... north component
ENV_SIZE = 32

ST_KICK_SIN = 32
ST_KICK_COS = 33
ST_PLANE_MODE = 34  # 0 plane of the inertial velocity, 1 fixed inertial plane, 2 inclination hold
ST_PLANE_N = 35  # 35-37 fixed plane normal (mode 1)
ST_COS_INC = 38  # mode 2: cos(target inclination)
ST_ASCENDING = 39  # mode 2: 1 northbound pass, 0 southbound
ST_YAW_BIAS = 40  # mode 2: added to the plane azimuth [rad]
ST_T_START = 41  # steering start [s]
ST_SPAN = 42  # steering span to final burnout [s]
ST_TH0 = 43  # initial pitch above the local horizontal [rad]
ST_THF = 44  # final pitch [rad]
ST_TH0_GIVEN = 45  # 1: ST_TH0 is given, 0: taken from the flight-path angle at steering start
ST_TAN0 = 46  # tan(ST_TH0)
ST_TANF = 47  # tan(ST_THF)

TB_PITCH_OFF = 48  # pitch table: times [s] at [off, off + n), pitch [rad] at [off + n, off + 2 n)
TB_PITCH_N = 49
TB_WIND_OFF = 50  # wind table: heights above the site [m], then speeds [m/s] (model 3: east, then north [m/s])
TB_WIND_N = 51
TB_KINK_OFF = 52  # altitudes where the atmosphere is not smooth [m], increasing
TB_KINK_N = 53
ENV_WIND_TOP = 54  # power law: the speed is held above this height above the site [m] (inf: no cap)
PAR_HEADER = 56  # tables start here; each stage's drag table: Mach numbers, then C_D

#: Steering modes of a phase. MODE_BODY: thrust along the body axis, a state that turns under the
#: aerodynamic moments (`equations.body_aero`; weathercocking of a finite static margin).
(MODE_RAIL, MODE_UP, MODE_KICK, MODE_PROGRADE, MODE_LINEAR_TANGENT, MODE_PITCH_RATE, MODE_TABLE, MODE_FIXED,
 MODE_BODY) = range(9)

# --- body aerodynamics and mass properties of one configuration (MODE_BODY) ----
# A block in ``par`` per configuration (the stack from one stage up), at PH_AERO_OFF:
# AB_SIZE scalars, then AB_N_MACH Mach numbers and, on them, the sums over the
# Barrowman components of C_N_alpha_i, C_N_alpha_i x_i [m] and C_N_alpha_i x_i^2 [m^2]
# (x from the nose tip, per radian, on the reference area).
AB_AREA = 0  # reference area [m^2]
AB_NOZZLE_X = 1  # nozzle exit from the nose tip [m] (jet damping)
AB_M_DRY = 2  # mass without the burning stage's propellant [kg]
AB_M1_DRY = 3  # its first moment about the nose tip [kg m]
AB_J_DRY = 4  # its second moment about the nose tip, own rod terms included [kg m^2]
AB_X_PROP = 5  # centroid of the burning propellant from the nose tip [m]
AB_J_PROP = 6  # second moment of the propellant per kg about the nose tip [m^2]
AB_N_MACH = 7
AB_SIZE = 8

# --- phase table ``phases`` (one row per smooth phase) ---------------------
PH_T0 = 0
PH_T1 = 1  # inf for the final coast
PH_STAGE = 2  # lowest attached stage
PH_BURNING = 3
PH_FA = 4  # vacuum thrust F_vac = FA + FB (t - T0) [N]
PH_FB = 5
PH_MA = 6  # mass flow mdot = MA + MB (t - T0) [kg/s]
PH_MB = 7
PH_BURNOUT_OF = 8  # stage burning out at T1, or -1
PH_MODE = 9  # steering mode
PH_EXIT_AREA = 10  # nozzle exit area [m^2]
PH_REF_AREA = 11  # drag reference area [m^2]
PH_DRAG_OFF = 12  # offset of the stage's drag table in ``par`` (Mach at [off, off + n), C_D after)
PH_DRAG_LEN = 13
PH_MASS_AFTER = 14  # mass after the burnout at T1 (next ignition mass, or payload + structure)
PH_PITCH = 15  # MODE_FIXED: pitch above the local horizontal [rad]
PH_MARK = 16  # row of the burnout table to record the state in at T1 (cut-offs that are not burnouts), or -1
PH_STEP_OFF = 17  # replay: offset in ``par`` of this phase's step-end fractions of the phase duration
PH_STEP_N = 18  # replay: number of steps (0: adaptive steps)
PH_AERO_OFF = 19  # MODE_BODY: offset in ``par`` of the configuration's AB_* block
PH_SIZE = 20

# --- options ``opt`` -----------------------------------------------------------
OPT_RTOL = 0
OPT_MAX_STEP = 1  # [s], inf: none
OPT_H_FIRST = 2  # first trial step [s]
OPT_STOP = 3  # STOP_APOGEE, STOP_IMPACT, STOP_BURNOUT
OPT_VERTICAL = 4  # 1 vertical (rail) profile: apogee events; 0 ascent
OPT_RECORD = 5  # 1 keep the time history
OPT_DETECT_IMPACT = 6
OPT_MAX_TIME = 7  # [s]
OPT_N_STAGES = 8
OPT_POS_SCALE = 9  # error norm position scale [m]
OPT_VEL_SCALE = 10  # error norm velocity floor [m/s]
OPT_N_MARKS = 11  # extra rows of the burnout table for cut-offs (PH_MARK)
OPT_REPLAY = 12  # 1: take the steps listed in the phases (PH_STEP_*) instead of adaptive ones
OPT_SIZE = 13

STOP_APOGEE, STOP_IMPACT, STOP_BURNOUT = range(3)

# --- termination codes -------------------------------------------------------
END_TIME_LIMIT, END_APOGEE, END_IMPACT, END_BURNOUT = range(4)

# --- scalar results ``out`` ----------------------------------------------------
OUT_END = 0
OUT_T = 1
OUT_MAXQ = 2
OUT_MAXQ_T = 3
OUT_MAXQ_ALT = 4
OUT_MAX_ACC = 5
OUT_RAIL_T = 6
OUT_RAIL_V = 7
OUT_APOGEE = 8
OUT_APOGEE_T = 9
OUT_IMPACT_T = 10
OUT_WENT_BELOW = 11
OUT_N_STEPS = 12
OUT_N_REJECTED = 13
OUT_N_RHS = 14
OUT_HAS_BUDGET = 15
OUT_N_HIST = 16
OUT_N_BURNOUTS = 17
OUT_N_STEPREC = 18  # rows of the step record (phase index, step-end fraction); -1 if not replayable
OUT_SIZE = 19

#: History columns recorded by the kernel (the Python side derives the rest).
(H_T, H_X, H_Y, H_Z, H_VX, H_VY, H_VZ, H_M, H_ALT, H_VREL, H_MACH, H_Q, H_ACC, H_THRUST, H_DRAG, H_STAGE,
 H_ALPHA) = range(17)
H_SIZE = 17

#: Capacity of the step record (steps of one flight, for replay).
STEP_RECORD_CAP = 8192

#: Burnout record (one row per stage, then one per marked cut-off): time, stage index, N_STATE-component state.
B_T, B_STAGE, B_Y = 0, 1, 2
B_SIZE = 2 + N_STATE
