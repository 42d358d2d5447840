#!/usr/bin/env python3
"""Write a raw-form network (docs/user-guide.md, `network:`) of N x N plate cells for the
benchmarks.

An invented scenario of round, plausible numbers: a square aluminium plate of side --side and
thickness --thickness cut into N x N equal square cells. Each cell is a node with capacity
rho c t dx^2, linked to its four neighbours by conduction G = k t (the conductance between the
centres of two square cells of side dx through a section t dx over a length dx), and to a fixed
room by fixed-coefficient convection (h, area dx^2) and by radiation (emissivity, area dx^2).
One constant-power source heats the centre cell. With --control an on-off controller switches
it, reading the cell half way between the centre and an edge.

tepid and tests/bench/reference.py read exactly the file this writes. Units used: J/K, W/K,
W/(m2.K), m2, W, degC, K, s, min (the subset reference.py parses).

  make_raw_grid.py N [--control] [--step 30] [--duration 30] [-o FILE]
"""
import argparse
import sys

ALUMINIUM = {"density": 2700.0, "specific_heat": 896.0, "conductivity": 167.0}  # kg/m3, J/(kg.K),
# W/(m.K): round values for a 6061-type alloy (common practice, no source)


def cell(i, j):
    return "c%d_%d" % (i, j)


def write(out, n, control, step_s, duration_min, side_m, thickness_m, power_w, tolerance):
    rho, c, k = (ALUMINIUM[x] for x in ("density", "specific_heat", "conductivity"))
    dx = side_m / n
    cap = rho * c * thickness_m * dx * dx  # J/K
    g = k * thickness_m                      # W/K, square cells
    area = dx * dx                           # m2
    mid = n // 2
    w = out.write
    # Every cell shares its values, so each is written once with a YAML anchor and then
    # aliased: that keeps a 64 x 64 grid inside tepid's document limits (MAX_BYTES, MAX_NODES).
    first = {"cap": True, "t0": True, "g": True, "conv": True, "rad": True}

    def value(key, anchor, text):
        if first[key]:
            first[key] = False
            return "&%s %s" % (anchor, text)
        return "*" + anchor

    w("# %d x %d cells of a %g mm square, %g mm aluminium plate (tests/bench/make_raw_grid.py;\n"
      "# an invented benchmark scenario). Generated: do not edit.\n"
      % (n, n, side_m * 1e3, thickness_m * 1e3))
    w("title: raw grid %dx%d%s\n" % (n, n, " on-off" if control else ""))
    w("network:\n nodes:\n")
    for i in range(n):
        for j in range(n):
            w(" - {id: %s, capacity: %s, initial: %s}\n"
              % (cell(i, j), value("cap", "C", "%.9g J/K" % cap), value("t0", "T", "21 degC")))
    w(" - {id: room, fixed: 21 degC}\n links:\n")
    for i in range(n):
        for j in range(n):
            if i + 1 < n:
                w(" - {between: [%s, %s], conductance: %s}\n"
                  % (cell(i, j), cell(i + 1, j), value("g", "G", "%.9g W/K" % g)))
            if j + 1 < n:
                w(" - {between: [%s, %s], conductance: %s}\n"
                  % (cell(i, j), cell(i, j + 1), value("g", "G", "%.9g W/K" % g)))
            w(" - {between: [%s, room], convection: %s}\n"
              % (cell(i, j), value("conv", "H", "{area: %.9g m2, coefficient: 9 W/(m2.K)}" % area)))
            w(" - {between: [%s, room], radiation: %s}\n"
              % (cell(i, j), value("rad", "R", "{area: %.9g m2, emissivity: 0.8}" % area)))
    w(" sources:\n")
    w(" - {id: heater, node: %s, power: %.9g W}\n" % (cell(mid, mid), power_w))
    if control:
        w("control:\n  source: heater\n  sensor: %s\n  mode: on-off\n  setpoint: 80 degC\n"
          "  band: 2 K\n  period: 1 s\n" % cell(mid, mid // 2))
    w("run:\n  duration: %g min\n  step: %g s\n" % (duration_min, step_s))
    if tolerance:
        w("  tolerance: %g\n" % tolerance)


def main(argv):
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("n", type=int, help="cells per side")
    p.add_argument("--control", action="store_true", help="add an on-off controller")
    p.add_argument("--step", type=float, default=30.0, help="output interval, s (default 30)")
    p.add_argument("--duration", type=float, default=30.0, help="simulated minutes (default 30)")
    p.add_argument("--side", type=float, default=200.0, help="plate side, mm (default 200)")
    p.add_argument("--thickness", type=float, default=4.0, help="plate thickness, mm (default 4)")
    p.add_argument("--power", type=float, default=60.0, help="heater power, W (default 60)")
    p.add_argument("--tolerance", type=float, default=0.0,
                   help="run.tolerance to write (default: none, tepid's 1e-6)")
    p.add_argument("-o", "--output", default="-", help="file to write (default standard output)")
    a = p.parse_args(argv)
    if a.n < 1:
        p.error("n must be at least 1")
    out = sys.stdout if a.output == "-" else open(a.output, "w", encoding="ascii")
    try:
        write(out, a.n, a.control, a.step, a.duration, a.side * 1e-3, a.thickness * 1e-3,
              a.power, a.tolerance)
    finally:
        if out is not sys.stdout:
            out.close()
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
