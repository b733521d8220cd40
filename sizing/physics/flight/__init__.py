"""Point-mass flight with changing mass: one set of equations, one compiled kernel.

Rooms (data flows down the list):

* ``layout``      index layout of the flat arrays the kernel reads
* ``tableau``     Dormand-Prince 5(4) coefficients as data
* ``steering``    thrust-direction laws (compiled)
* ``equations``   the equations of motion and the loss-budget integrands (compiled)
* ``integrator``  embedded Runge-Kutta step, dense output, step-size control (compiled)
* ``events``      one event locator; atmosphere and drag-table kinks (compiled)
* ``kernel``      the flight loop: phases, steps, events, max-q, history (compiled)
* ``profiles``    `AscentProfile`, the steering programme (Python)
* ``results``     `FlightResult` and friends, assembled from the kernel's arrays (Python)
* ``setup``       vehicle + site + options -> the kernel's arrays (Python)
* ``fly``         the public entry points (Python)

Steering optimisation lives in `sizing.optimize.ascent`, not here.
"""

from sizing.physics.flight.fly import (
    DTEG_MIN_RAIL_EXIT_SPEED_M_S, HOBBY_MIN_LIFTOFF_TW, HOBBY_MIN_RAIL_EXIT_SPEED_M_S, fly_ascent, fly_many,
    fly_vertical, simulate,
)
from sizing.physics.flight.profiles import STEERING_LAWS, AscentProfile
from sizing.physics.flight.results import LOSS_KEYS, FlightHistory, FlightResult, StageBurnout
from sizing.physics.flight.setup import Wind

__all__ = [
    "LOSS_KEYS", "HOBBY_MIN_LIFTOFF_TW", "DTEG_MIN_RAIL_EXIT_SPEED_M_S", "HOBBY_MIN_RAIL_EXIT_SPEED_M_S",
    "STEERING_LAWS", "AscentProfile", "StageBurnout", "FlightHistory", "FlightResult", "Wind",
    "fly_vertical", "fly_ascent", "fly_many", "simulate",
]
