"""Trajectory speed: our fixed-step RK4 vs a plain scipy solve_ivp formulation, side by side.

Run:  python benchmarks/bench_trajectory.py

Prints, for a three-stage gravity-turn ascent (invented vehicle) and for a
vertical sounding-rocket flight, the end state of both integrations, their
difference, time per trajectory and the speed ratio; then the time to size
the three-stage vehicle to a 200 km circular orbit with
`sizing.optimize.flight.size_to_target`.

The reference formulation integrates the same equations of motion (inertial
frame, inverse-square gravity, rotating atmosphere, thrust F_vac - p_a A_e,
drag q C_D(M) S along the air-relative velocity, the same steering law) with
numpy vectors and scipy.integrate.solve_ivp (RK45, rtol 1e-9, atol 1e-6),
phase by phase over the same breakpoints.
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from sizing.optimize.flight import OrbitTarget, size_to_target  # noqa: E402
from sizing.physics.atmosphere import pressure_density_sound_speed  # noqa: E402
from sizing.physics.trajectory import (  # noqa: E402
    _KICK, _LTG, _PRO, _UP, AscentProfile, _build_phases, _stage_windows, fly_ascent, fly_vertical,
)
from sizing.physics.vehicle import FlightStage, FlightStageSpec, LaunchSite, Vehicle, build_vehicle  # noqa: E402
from sizing.units import G0_M_S2, GM_EARTH_M3_S2, OMEGA_EARTH_RAD_S, R_EARTH_EQ_M  # noqa: E402

SPECS = [
    FlightStageSpec("booster", 310.0, 0.07, 1.5, diameter_m=3.7, isp_sl_s=280.0),
    FlightStageSpec("sustainer", 345.0, 0.09, 1.1, diameter_m=3.7, isp_sl_s=300.0),
    FlightStageSpec("kick", 450.0, 0.12, 0.9, diameter_m=3.0),
]
MP = [83231.65, 12212.04, 2785.89]
MS = [6264.76, 1207.79, 379.89]
PROFILE = AscentProfile(pitch_kick_deg=6.5248, initial_pitch_deg=20.2973, final_pitch_deg=-8.0830)


def scipy_ascent(vehicle: Vehicle, site: LaunchSite, prof: AscentProfile, rtol: float = 1e-9,
                 atol: float = 1e-6):
    """Plain formulation: numpy vectors + solve_ivp, same equations and phases."""
    w = np.array([0.0, 0.0, OMEGA_EARTH_RAD_S])
    lat, az = math.radians(site.latitude_deg), math.radians(site.azimuth_deg)
    r0 = (R_EARTH_EQ_M + site.altitude_m) * np.array([math.cos(lat), 0.0, math.sin(lat)])
    north0 = np.array([-math.sin(lat), 0.0, math.cos(lat)])
    east0 = np.array([0.0, 1.0, 0.0])
    azd = math.cos(az) * north0 + math.sin(az) * east0
    windows = _stage_windows(vehicle, ignore_first_coast=True)
    t_vert, t_kick = prof.vertical_rise_s, prof.vertical_rise_s + prof.kick_duration_s
    steer_start = windows[1][0]
    phases = _build_phases(vehicle, windows, [t_vert, t_kick, steer_start])
    t_end = windows[-1][1]
    th0, thf = math.radians(prof.initial_pitch_deg), math.radians(prof.final_pitch_deg)
    ks, kc = math.sin(math.radians(prof.pitch_kick_deg)), math.cos(math.radians(prof.pitch_kick_deg))

    def make_rhs(ph, mode):
        st = vehicle.stages[ph.stage]
        area = vehicle.reference_area_m2(ph.stage)
        ae = st.exit_area_m2

        def rhs(t, y):
            r, v, m = y[0:3], y[3:6], y[6]
            rn = np.linalg.norm(r)
            up = r / rn
            g = -GM_EARTH_M3_S2 * r / rn**3
            vrel = v - np.cross(w, r)
            vr = np.linalg.norm(vrel)
            alt = rn - R_EARTH_EQ_M
            p, rho, a = pressure_density_sound_speed(alt) if alt < 300e3 else (0.0, 0.0, 1.0)
            if ph.burning:
                fv = ph.f_a + ph.f_b * (t - ph.t0)
                f = max(0.0, fv - p * ae)
                mdot = ph.m_a + ph.m_b * (t - ph.t0)
            else:
                f = mdot = 0.0
            drag = 0.5 * rho * vr * st.drag.cd_at(vr / a) * area * vrel if vr > 0 else np.zeros(3)
            if mode == _UP:
                u = up
            elif mode == _KICK:
                h = azd - np.dot(azd, up) * up
                u = kc * up + ks * h / np.linalg.norm(h)
            elif mode == _PRO:
                u = vrel / vr
            else:
                frac = (t - steer_start) / (t_end - steer_start)
                th = math.atan(math.tan(th0) + (math.tan(thf) - math.tan(th0)) * frac)
                h = v - np.dot(v, up) * up
                u = math.cos(th) * h / np.linalg.norm(h) + math.sin(th) * up
            acc = (f * u - drag) / m + g
            return np.concatenate((v, acc, [-mdot]))

        return rhs

    y = np.concatenate((r0, np.cross(w, r0), [vehicle.gross_mass_kg]))
    for ph in phases:
        mid = 0.5 * (ph.t0 + ph.t1)
        mode = _UP if mid < t_vert else _KICK if mid < t_kick else _LTG if mid >= steer_start else _PRO
        sol = solve_ivp(make_rhs(ph, mode), (ph.t0, ph.t1), y, method="RK45", rtol=rtol, atol=atol)
        y = sol.y[:, -1].copy()
        if ph.burnout_of >= 0 and ph.burnout_of < len(vehicle.stages) - 1:
            y[6] = vehicle.ignition_mass_kg(ph.burnout_of + 1)
    r, v = y[0:3], y[3:6]
    return np.linalg.norm(r) - R_EARTH_EQ_M, np.linalg.norm(v)


def timeit(fn, n):
    t0 = time.perf_counter()
    for _ in range(n):
        out = fn()
    return (time.perf_counter() - t0) / n, out


def main() -> None:
    vehicle = build_vehicle(SPECS, MP, MS, 5000.0)
    site = LaunchSite(latitude_deg=28.5, azimuth_deg=90.0)
    print("Three-stage gravity-turn ascent (invented vehicle, 5 t payload, 28.5 deg, due east)")
    t_ours, res = timeit(lambda: fly_ascent(vehicle, site, PROFILE, record_history=False), 30)
    t_hist, _ = timeit(lambda: fly_ascent(vehicle, site, PROFILE, record_history=True), 10)
    t_ref, (alt_ref, v_ref) = timeit(lambda: scipy_ascent(vehicle, site, PROFILE), 3)
    alt_x, v_x = scipy_ascent(vehicle, site, PROFILE, rtol=1e-12, atol=1e-9)
    alt, v = res.orbit.altitude_m, res.final_inertial_speed_m_s
    print(f"  {'':30s}{'ours (RK4 0.5 s/4 s)':>22s}{'solve_ivp RK45 1e-9':>22s}{'difference':>12s}")
    print(f"  {'burnout altitude [m]':30s}{alt:22.2f}{alt_ref:22.2f}{alt - alt_ref:12.3f}")
    print(f"  {'burnout inertial speed [m/s]':30s}{v:22.4f}{v_ref:22.4f}{v - v_ref:12.4f}")
    print(f"  {'error vs solve_ivp rtol 1e-12':30s}{f'{alt - alt_x:+.2f} m, {v - v_x:+.4f} m/s':>22s}"
          f"{f'{alt_ref - alt_x:+.2f} m, {v_ref - v_x:+.4f} m/s':>22s}")
    print(f"  {'time per trajectory [ms]':30s}{1e3 * t_ours:22.2f}{1e3 * t_ref:22.2f}"
          f"{'ratio ' + format(t_ref / t_ours, '.1f') + 'x':>12s}")
    print(f"  (ours with full time history: {1e3 * t_hist:.2f} ms)")

    print("\n  Accuracy vs cost (errors against solve_ivp rtol 1e-12):")
    print(f"  {'integration':28s}{'alt err [m]':>12s}{'speed err [m/s]':>17s}{'ms/traj':>10s}")
    rows = []
    for dt in (0.25, 0.5, 1.0):
        t_, r_ = timeit(lambda: fly_ascent(vehicle, site, PROFILE, record_history=False, max_step_s=dt), 10)
        rows.append((f"ours RK4 {dt:g} s (x8 above 100 km)", r_.orbit.altitude_m - alt_x,
                     r_.final_inertial_speed_m_s - v_x, 1e3 * t_))
    for rt in (1e-7, 1e-8, 1e-9, 1e-10):
        t_, (a_, v_) = timeit(lambda: scipy_ascent(vehicle, site, PROFILE, rtol=rt), 2)
        rows.append((f"solve_ivp RK45 rtol {rt:g}", a_ - alt_x, v_ - v_x, 1e3 * t_))
    for name, ea, ev, ms in rows:
        print(f"  {name:28s}{ea:12.2f}{ev:17.4f}{ms:10.2f}")

    print("\nVertical flight of a sounding rocket, rail 8 m, drag, round Earth, to apogee")
    st = FlightStage("motor", 8.0, 4.0, 230.0, diameter_m=0.15, thrust_vac_n=2500.0)
    sv = Vehicle((st,), 4.0)
    vsite = LaunchSite(altitude_m=1400.0, rail_length_m=8.0)
    t_v, rv = timeit(lambda: fly_vertical(sv, vsite, earth="round", record_history=False), 20)
    print(f"  apogee {rv.apogee_m:.2f} m at {rv.time_to_apogee_s:.3f} s; {1e3 * t_v:.2f} ms per trajectory")

    print("\nSizing the three-stage vehicle to a 200 km circular orbit, 30 deg inclination")
    t0 = time.perf_counter()
    sized = size_to_target(SPECS, 5000.0, OrbitTarget(200e3, inclination_deg=30.0),
                           LaunchSite(latitude_deg=28.5))
    dt = time.perf_counter() - t0
    print(f"  converged={sized.converged} in {sized.n_iterations} outer flights, {dt:.2f} s wall time")
    print(f"  gross mass {sized.gross_mass_kg:.1f} kg, ideal delta-v {sized.ideal_delta_v_m_s:.1f} m/s, "
          f"losses " + ", ".join(f"{k} {v:.1f}" for k, v in sized.losses_m_s.items()) + " m/s, "
          f"rotation bonus {sized.rotation_bonus_m_s:.1f} m/s")
    a = sized.achieved
    print(f"  orbit {a['perigee_alt_m'] / 1e3:.2f} x {a['apogee_alt_m'] / 1e3:.2f} km, "
          f"inclination {a['inclination_deg']:.2f} deg")


if __name__ == "__main__":
    main()
