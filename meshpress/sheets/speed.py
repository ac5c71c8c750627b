"""Loads at other speeds, and the axle and wheel loads they leave on the tyres.

Pure functions over coefficients.  Scaling with q = 1/2 rho V^2 assumes the
Cp field does not change with speed (Reynolds-number independence), which is
roughly true at high Reynolds number but not for rounded edges, separations
near their limit or anything that moves (ride height, wings flexing)
[practice].  :data:`SPEED_CAUTION` says so in every output.
"""

from __future__ import annotations

import numpy as np

SPEED_CAUTION = (
    "Loads at other speeds are scaled with q = 1/2 rho V^2 from the measured coefficients: this assumes Cp does not "
    "change with speed (Reynolds-number independence) and that ride height and attitude stay as tested. Treat them "
    "as estimates; do not rely on them for grip, braking or safety margins without tests at that speed, and defer "
    "to the sanctioning body's rules and qualified engineers."
)


def loads_at_speeds(speeds, rho: float, area: float, *, CL: float, CD: float, CLF: float | None = None,
                    CLR: float | None = None) -> dict:
    """Aero loads over a range of speeds from the coefficients.

    F = C q A with q = 1/2 rho V^2.

    Parameters
    ----------
    speeds : (n,) float
        Air speeds, m/s.
    rho : float
        Air density, kg/m3.
    area : float
        Reference area, m2.
    CL, CD, CLF, CLR : float
        Coefficients (lift + up).

    Returns
    -------
    dict of (n,) float arrays
        ``speed_mps, q_Pa, lift_N, downforce_N, drag_N, front_lift_N, rear_lift_N, drag_power_W``.
    """
    v = np.asarray(speeds, float)
    q = 0.5 * rho * v * v
    out = {"speed_mps": v, "q_Pa": q, "lift_N": CL * q * area, "downforce_N": -CL * q * area,
           "drag_N": CD * q * area, "drag_power_W": CD * q * area * v}
    if CLF is not None and CLR is not None:
        out["front_lift_N"] = CLF * q * area
        out["rear_lift_N"] = CLR * q * area
    return out


def axle_loads(static_front_N: float, static_rear_N: float, front_lift_N, rear_lift_N) -> tuple:
    """Vertical axle loads at speed = static load minus aero lift on that axle, N.

    Lift is + up, so downforce (negative lift) adds load.
    """
    return static_front_N - np.asarray(front_lift_N, float), static_rear_N - np.asarray(rear_lift_N, float)


def wheel_loads(static_corners_N, front_lift_N, rear_lift_N) -> tuple:
    """Wheel loads at speed (FL, FR, RL, RR), N: each axle's lift shared equally left and right.

    The equal share assumes a symmetric car in straight running (no side force
    or roll moment).
    """
    fl, fr, rl, rr = static_corners_N
    hf = 0.5 * np.asarray(front_lift_N, float)
    hr = 0.5 * np.asarray(rear_lift_N, float)
    return fl - hf, fr - hf, rl - hr, rr - hr


def weight_share(lift_N, weight_N: float):
    """Share of the car's static weight that aero adds (+) or removes (-): -L / W."""
    return -np.asarray(lift_N, float) / weight_N


def speed_table(speeds, rho, area, coeffs: dict, static=None) -> dict:
    """:func:`loads_at_speeds` plus axle, wheel loads and weight share when static loads are known.

    Parameters
    ----------
    coeffs : dict
        ``CL, CD, CLF, CLR``.
    static : StaticLoad, optional
        From the sheet (front_N, rear_N, corners_N).
    """
    t = loads_at_speeds(speeds, rho, area, CL=coeffs["CL"], CD=coeffs["CD"], CLF=coeffs.get("CLF"),
                        CLR=coeffs.get("CLR"))
    if static is not None and "front_lift_N" in t:
        t["front_axle_load_N"], t["rear_axle_load_N"] = axle_loads(static.front_N, static.rear_N,
                                                                   t["front_lift_N"], t["rear_lift_N"])
        t["weight_share_added"] = weight_share(t["lift_N"], static.total_N)
        total = t["front_axle_load_N"] + t["rear_axle_load_N"]
        t["front_load_share"] = t["front_axle_load_N"] / total
        if static.corners_N is not None:
            for k, v in zip(("fl", "fr", "rl", "rr"), wheel_loads(static.corners_N, t["front_lift_N"],
                                                                  t["rear_lift_N"])):
                t[f"wheel_{k}_N"] = v
    return t


def plot_speed_tables(tables: dict, path, *, unit: str = "km/h", title: str = "", static=None) -> None:
    """Plot aero loads and axle loads against speed for each configuration (PNG).

    Display only: every number comes from :func:`speed_table`.  matplotlib is
    imported here, so the rest of meshpress runs without it.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from ..units import speed_factor

    f = speed_factor(unit)
    has_axles = all("front_axle_load_N" in t for t in tables.values())
    fig, axes = plt.subplots(1, 2 if has_axles else 1, figsize=(12 if has_axles else 6.5, 4.6), squeeze=False)
    ax = axes[0, 0]
    colours = plt.rcParams["axes.prop_cycle"].by_key()["color"]
    for k, (name, t) in enumerate(tables.items()):
        c = colours[k % len(colours)]
        v = t["speed_mps"] / f
        ax.plot(v, t["lift_N"], color=c, lw=2, label=f"{name}: lift")
        ax.plot(v, t["drag_N"], color=c, lw=1.2, ls="--", label=f"{name}: drag")
        if "front_lift_N" in t:
            ax.plot(v, t["front_lift_N"], color=c, lw=1, ls=":", label=f"{name}: front axle lift")
    ax.axhline(0, color="0.6", lw=0.8)
    ax.set_xlabel(f"speed ({unit})")
    ax.set_ylabel("force (N)")
    ax.set_title("aero loads (lift + up: downforce is negative lift)")
    ax.legend(fontsize=8)
    ax.grid(alpha=0.3)
    if has_axles:
        ax = axes[0, 1]
        for k, (name, t) in enumerate(tables.items()):
            c = colours[k % len(colours)]
            v = t["speed_mps"] / f
            ax.plot(v, t["front_axle_load_N"], color=c, lw=2, label=f"{name}: front axle")
            ax.plot(v, t["rear_axle_load_N"], color=c, lw=2, ls="--", label=f"{name}: rear axle")
        if static is not None:
            ax.axhline(static.front_N, color="0.4", lw=0.8, ls="-")
            ax.axhline(static.rear_N, color="0.4", lw=0.8, ls="--")
            ax.text(v[0], static.front_N, " static front", fontsize=7, va="bottom", color="0.3")
            ax.text(v[0], static.rear_N, " static rear", fontsize=7, va="bottom", color="0.3")
        ax.set_xlabel(f"speed ({unit})")
        ax.set_ylabel("axle load (N)")
        ax.set_title("axle loads at speed (static minus aero lift)")
        ax.legend(fontsize=8)
        ax.grid(alpha=0.3)
    fig.suptitle((title + "\n" if title else "") + "scaled from coefficients: assumes Cp independent of speed",
                 fontsize=9)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
