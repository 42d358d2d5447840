#!/usr/bin/env python3
"""The general-purpose reference for tests/bench/run.sh: a raw-form tepid network
(docs/user-guide.md, `network:`) read from the same YAML file and integrated by SciPy's
solve_ivp (BDF) at tepid's tolerances, and by a fixed-step explicit Euler scheme (numpy); both
compared with tepid's own histories (CSV). Needs Debian's python3-numpy, python3-scipy and
python3-yaml.

The model is the one src/model/network.c evaluates, written again from docs/model.md:

  state y = [T_1 .. T_n, E_src, E_lost, E_wire]  (free temperatures in declaration order, K;
            then the energy totals tepid also integrates, J, so both solvers control the error
            of the same vector with the same weights)
  C_i dT_i/dt = sum over links of the heat flowing in + the power of the sources on node i
  conduction Q = G (Ta - Tb); convection Q = h A (Ta - Tb);
  radiation  Q = eps sigma A (Ta^4 - Tb^4)  (kelvin)
  sources    P = duty * power, or P = duty * V^2 / R(T), R(T) = R0 (1 + tempco (T - reference))
             (R floored at R0/100, as tepid does)
  dE_src/dt = sum P, dE_lost/dt = heat into fixed nodes, dE_wire/dt = 0 (no wiring in the raw
  form)

Tolerances: rtol = run.tolerance (default 1e-6) and atol = rtol * 10 K on temperatures,
rtol * 1 J on the energy totals: src/solve/integrate.c TP_ATOL_KELVIN and TP_ATOL_JOULE.

Control (docs/control.md): the controller samples the sensor node at t = 0, period, 2 period, ...
and holds its output (zero-order hold). on-off: off when the reading >= setpoint + band/2, on
when <= setpoint - band/2, else unchanged; at t = 0 on when the reading is below the setpoint.
pid: src/model/control.c's positional PID (integral clamped to [0, 1], derivative on the reading).
Two ways to integrate across the ticks are timed:
  tick     solve_ivp from each tick to the next with the duty held: what a general-purpose
           user writes; every tick restarts BDF at order 1 with a new Jacobian
  restart  scipy's BDF stepper (the class solve_ivp drives) continued across ticks, the state
           at a tick taken from its dense output, restarted only where the duty changes: the
           strategy of tepid's own driver, so this compares the solvers themselves

Units understood (the subset make_raw_grid.py and configs/raw-five-node.yaml use): absolute
temperatures degC and K; intervals K and degC; s, ms, min, h; J/K, kJ/K; W/K; W/(m2.K); m2,
cm2, mm2; W, kW; V; ohm, kohm; 1/K; 1/(K.s); s/K; bare numbers for emissivity, tolerance and
dimensionless keys. Anything else is refused with the key named.

  reference.py CONFIG --tepid-csv F [--ref-csv F --tepid-seconds S --tepid-rhs N] [--euler]
               [--modes tick,restart] [--runs 5] [--budget 120] [--name NAME] [--json OUT]
  reference.py summarise --csv OUT.csv [--scaling SCALING.csv] [--load LOAD.csv] JSON...
               (the CSV and the Markdown tables of run.sh from the JSON results)
"""
import argparse
import json
import math
import re
import statistics
import sys
import time
from fractions import Fraction

try:
    import numpy as np
    import scipy
    import scipy.sparse as sp
    from scipy.integrate import BDF, solve_ivp
    import yaml
except ImportError as e:  # run.sh checks first; this is for direct use
    sys.stderr.write("reference.py: %s (apt-get install python3-numpy python3-scipy "
                     "python3-yaml)\n" % e)
    sys.exit(2)

SIGMA = 5.670374419e-8   # W/(m2.K4), Stefan-Boltzmann (CODATA 2018), as src/model/radiation.h
ATOL_KELVIN = 10.0       # K, src/solve/integrate.c TP_ATOL_KELVIN
ATOL_JOULE = 1.0         # J, src/solve/integrate.c TP_ATOL_JOULE
DEFAULT_RTOL = 1.0e-6    # src/input/config.c TP_DEFAULT_RTOL
DEFAULT_STEP = 1.0       # s, src/input/config.c TP_DEFAULT_STEP
DEFAULT_DURATION = 1800.0  # s, src/input/config.c TP_DEFAULT_DURATION
DEFAULT_PERIOD = 1.0     # s
DEFAULT_BAND = 2.0       # K
DEFAULT_REFERENCE = 293.15  # K, 20 degC
R_FLOOR = 1.0e-2         # -, src/model/network.c TP_R_FLOOR
DENSE_MAX = 12           # free nodes up to which the Jacobian goes dense (src/solve/integrate.h)
KELVIN_0C = 273.15

# unit -> (dimension, factor to SI); temperatures are handled apart (offset or interval).
UNITS = {
    "s": ("time", 1.0), "ms": ("time", 1e-3), "min": ("time", 60.0), "h": ("time", 3600.0),
    "J/K": ("capacity", 1.0), "kJ/K": ("capacity", 1e3),
    "W/K": ("conductance", 1.0),
    "W/(m2.K)": ("htc", 1.0),
    "m2": ("area", 1.0), "cm2": ("area", 1e-4), "mm2": ("area", 1e-6),
    "W": ("power", 1.0), "kW": ("power", 1e3),
    "V": ("voltage", 1.0),
    "ohm": ("resistance", 1.0), "kohm": ("resistance", 1e3),
    "1/K": ("per_kelvin", 1.0), "1/(K.s)": ("per_kelvin_s", 1.0), "s/K": ("s_per_kelvin", 1.0),
}
NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


class ConfigError(Exception):
    pass


def quantity(value, dim, key):
    """A config value in SI. dim: one of UNITS' dimensions, 'temperature' (absolute, K),
    'interval' (K), or 'none' (a bare number)."""
    if isinstance(value, bool) or value is None:
        raise ConfigError("%s: expected a number, got %r" % (key, value))
    if isinstance(value, (int, float)):
        if dim != "none":
            raise ConfigError("%s: %r needs a unit" % (key, value))
        return float(value)
    m = NUMBER.match(str(value))
    if not m:
        raise ConfigError("%s: cannot read %r" % (key, value))
    x, unit = float(m.group(1)), m.group(2)
    if dim == "none":
        if unit == "":
            return x
        if unit == "%":
            return x / 100.0
        raise ConfigError("%s: %r should be a bare number" % (key, value))
    if dim == "temperature":
        if unit == "degC":
            return x + KELVIN_0C
        if unit == "K":
            return x
        raise ConfigError("%s: unit %r not in reference.py's subset (degC, K)" % (key, unit))
    if dim == "interval":
        if unit in ("K", "degC"):
            return x
        raise ConfigError("%s: unit %r not in reference.py's subset (K, degC)" % (key, unit))
    if unit not in UNITS:
        raise ConfigError("%s: unit %r not in reference.py's subset" % (key, unit))
    udim, factor = UNITS[unit]
    if udim != dim:
        raise ConfigError("%s: %r is a %s, expected a %s" % (key, value, udim, dim))
    return x * factor


def load_yaml(path):
    loader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
    with open(path, "rb") as f:
        return yaml.load(f, Loader=loader)


class Network:
    """The raw network of a config, with vectorised right-hand side and sparse Jacobian."""

    def __init__(self, path):
        doc = load_yaml(path)
        if not isinstance(doc, dict) or "network" not in doc:
            raise ConfigError("%s: not a raw-form config (no network:)" % path)
        net = doc["network"]
        self.ids, cap, t0 = [], [], []
        for i, n in enumerate(net.get("nodes") or []):
            key = "network.nodes.%d" % i
            self.ids.append(str(n["id"]))
            if "capacity" in n:
                cap.append(quantity(n["capacity"], "capacity", key + ".capacity"))
                t0.append(quantity(n["initial"], "temperature", key + ".initial"))
            else:
                cap.append(0.0)
                t0.append(quantity(n["fixed"], "temperature", key + ".fixed"))
        index = {nid: i for i, nid in enumerate(self.ids)}
        self.n_nodes = len(self.ids)
        self.cap_all = np.array(cap)
        self.t0_all = np.array(t0)
        self.free = np.flatnonzero(self.cap_all > 0)        # node index of each state
        self.fixed = np.flatnonzero(self.cap_all <= 0)
        self.nf = len(self.free)
        self.state_of = -np.ones(self.n_nodes, dtype=int)
        self.state_of[self.free] = np.arange(self.nf)
        self.cap = self.cap_all[self.free]
        self.free_ids = [self.ids[i] for i in self.free]

        lin_a, lin_b, lin_g, rad_a, rad_b, rad_k = [], [], [], [], [], []
        for i, l in enumerate(net.get("links") or []):
            key = "network.links.%d" % i
            a, b = (index[str(x)] for x in l["between"])
            if "conductance" in l:
                lin_a.append(a), lin_b.append(b)
                lin_g.append(quantity(l["conductance"], "conductance", key + ".conductance"))
            elif "convection" in l:
                c = l["convection"]
                lin_a.append(a), lin_b.append(b)
                lin_g.append(quantity(c["coefficient"], "htc", key + ".convection.coefficient") *
                             quantity(c["area"], "area", key + ".convection.area"))
            elif "radiation" in l:
                r = l["radiation"]
                rad_a.append(a), rad_b.append(b)
                rad_k.append(quantity(r["emissivity"], "none", key + ".radiation.emissivity") *
                             SIGMA * quantity(r["area"], "area", key + ".radiation.area"))
            else:
                raise ConfigError("%s: no law" % key)
        self.lin_a, self.lin_b = np.array(lin_a, dtype=int), np.array(lin_b, dtype=int)
        self.lin_g = np.array(lin_g)
        self.rad_a, self.rad_b = np.array(rad_a, dtype=int), np.array(rad_b, dtype=int)
        self.rad_k = np.array(rad_k)

        self.sources = []
        for i, s in enumerate(net.get("sources") or []):
            key = "network.sources.%d" % i
            src = {"id": str(s["id"]), "node": index[str(s["node"])]}
            if "power" in s:
                src["power"] = quantity(s["power"], "power", key + ".power")
            else:
                src["supply"] = quantity(s["supply"], "voltage", key + ".supply")
                src["r0"] = quantity(s["resistance"], "resistance", key + ".resistance")
                src["tempco"] = (quantity(s["tempco"], "per_kelvin", key + ".tempco")
                                 if "tempco" in s else 0.0)
                src["tref"] = (quantity(s["reference"], "temperature", key + ".reference")
                               if "reference" in s else DEFAULT_REFERENCE)
            self.sources.append(src)
        self.duty = np.ones(len(self.sources))
        self.duty_log = None  # a list to record the duty decided at each tick, or None

        run = doc.get("run") or {}
        self.rtol = quantity(run["tolerance"], "none", "run.tolerance") if "tolerance" in run \
            else DEFAULT_RTOL
        self.t_end = quantity(run["duration"], "time", "run.duration") if "duration" in run \
            else DEFAULT_DURATION
        self.step = quantity(run["step"], "time", "run.step") if "step" in run else DEFAULT_STEP

        self.control = None
        if doc.get("control"):
            c = doc["control"]
            mode = str(c["mode"])
            ctl = {"mode": mode,
                   "source": [s["id"] for s in self.sources].index(str(c["source"])),
                   "sensor": index[str(c["sensor"])],
                   "period": quantity(c["period"], "time", "control.period") if "period" in c
                   else DEFAULT_PERIOD}
            if mode in ("on-off", "pid"):
                ctl["setpoint"] = quantity(c["setpoint"], "temperature", "control.setpoint")
            if mode == "on-off":
                ctl["band"] = quantity(c["band"], "interval", "control.band") if "band" in c \
                    else DEFAULT_BAND
            elif mode == "pid":
                for k in ("duty_levels", "derivative_filter"):
                    if k in c:
                        raise ConfigError("control.%s is not supported by this reference "
                                          "solver" % k)
                ctl["kp"] = quantity(c.get("kp", "0 1/K"), "per_kelvin", "control.kp")
                ctl["ki"] = quantity(c.get("ki", "0 1/(K.s)"), "per_kelvin_s", "control.ki")
                ctl["kd"] = quantity(c.get("kd", "0 s/K"), "s_per_kelvin", "control.kd")
            elif mode not in ("off", "full"):
                raise ConfigError("control.mode: %r not supported here" % mode)
            self.control = ctl
        self._build_incidence()

    # ---- structure ---------------------------------------------------------------------
    def _build_incidence(self):
        """Sparse maps from link flows to heat into free nodes (divided by capacity) and into
        fixed nodes (the lost-energy rate), and the Jacobian's COO pattern."""
        nl, nr = len(self.lin_g), len(self.rad_k)
        a = np.concatenate([self.lin_a, self.rad_a])
        b = np.concatenate([self.lin_b, self.rad_b])
        links = np.arange(nl + nr)
        sa, sb = self.state_of[a], self.state_of[b]
        rows, cols, vals = [], [], []
        fa, fb = sa >= 0, sb >= 0
        rows += [sa[fa], sb[fb]]
        cols += [links[fa], links[fb]]
        vals += [-1.0 / self.cap[sa[fa]], 1.0 / self.cap[sb[fb]]]
        self.to_free = sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows),
                                                             np.concatenate(cols))),
                                     shape=(self.nf, nl + nr))
        lost = np.zeros(nl + nr)
        lost[~fb] += 1.0   # flow a -> b into a fixed b
        lost[~fa] -= 1.0   # flow a -> b out of a fixed a
        self.to_lost = lost
        self.link_a, self.link_b, self.link_sa, self.link_sb = a, b, sa, sb
        self.n_lin = nl
        n = self.nf + 3
        self.n_state = n
        # Jacobian entries per link: (row state, col state, which derivative, sign / cap)
        r, c, kind, link, scale = [], [], [], [], []
        for (rs, rmask, rsign) in ((sa, fa, -1.0), (sb, fb, 1.0)):
            for (cs, cmask, which) in ((sa, fa, 0), (sb, fb, 1)):
                m = rmask & cmask
                r.append(rs[m]), c.append(cs[m]), kind.append(np.full(m.sum(), which))
                link.append(links[m]), scale.append(rsign / self.cap[rs[m]])
        # the lost-energy row: d(lost)/dT of free endpoints of links to fixed nodes
        ql = self.nf + 1
        for (cs, cmask, which) in ((sa, fa, 0), (sb, fb, 1)):
            m = cmask & (lost != 0)
            r.append(np.full(m.sum(), ql)), c.append(cs[m]), kind.append(np.full(m.sum(), which))
            link.append(links[m]), scale.append(lost[m])
        self.jac_rows = np.concatenate(r)
        self.jac_cols = np.concatenate(c)
        self.jac_kind = np.concatenate(kind)
        self.jac_link = np.concatenate(link)
        self.jac_scale = np.concatenate(scale)
        self.src_state = np.array([self.state_of[s["node"]] for s in self.sources], dtype=int)
        self.t_all = self.t0_all.copy()  # scratch: every node's temperature, K

    def initial_state(self):
        y = np.zeros(self.n_state)
        y[:self.nf] = self.t0_all[self.free]
        return y

    def atol(self):
        a = np.full(self.n_state, self.rtol * ATOL_JOULE)
        a[:self.nf] = self.rtol * ATOL_KELVIN
        return a

    # ---- the model ---------------------------------------------------------------------
    def _temps(self, y):
        t = self.t_all
        t[self.free] = y[:self.nf]
        return t

    def flows(self, t):
        ta, tb = t[self.link_a], t[self.link_b]
        q = np.empty(len(ta))
        nl = self.n_lin
        q[:nl] = self.lin_g * (ta[:nl] - tb[:nl])
        ra, rb = ta[nl:], tb[nl:]
        q[nl:] = self.rad_k * (ra * ra + rb * rb) * (ra + rb) * (ra - rb)
        return q

    def source_power(self, t):
        """Per-source delivered power and its derivative with respect to its node, W, W/K."""
        p, dp = np.zeros(len(self.sources)), np.zeros(len(self.sources))
        for i, s in enumerate(self.sources):
            d = self.duty[i]
            if "power" in s:
                p[i] = d * s["power"]
                continue
            raw = s["r0"] * (1.0 + s["tempco"] * (t[s["node"]] - s["tref"]))
            floor = s["r0"] * R_FLOOR
            r = max(raw, floor)
            p[i] = d * s["supply"] ** 2 / r
            dp[i] = -d * s["supply"] ** 2 / (r * r) * s["r0"] * s["tempco"] if raw > floor else 0.0
        return p, dp

    def rhs(self, t_s, y):
        t = self._temps(y)
        q = self.flows(t)
        ydot = np.empty(self.n_state)
        ydot[:self.nf] = self.to_free @ q
        p, _ = self.source_power(t)
        for i, s in enumerate(self.src_state):
            ydot[s] += p[i] / self.cap[s]
        ydot[self.nf] = p.sum()
        ydot[self.nf + 1] = self.to_lost @ q
        ydot[self.nf + 2] = 0.0
        return ydot

    def jac(self, t_s, y):
        t = self._temps(y)
        ta, tb = t[self.link_a], t[self.link_b]
        nl = self.n_lin
        da, db = np.empty(len(ta)), np.empty(len(ta))
        da[:nl], db[:nl] = self.lin_g, -self.lin_g
        da[nl:] = 4.0 * self.rad_k * ta[nl:] ** 3
        db[nl:] = -4.0 * self.rad_k * tb[nl:] ** 3
        d = np.where(self.jac_kind == 0, da[self.jac_link], db[self.jac_link])
        vals = [d * self.jac_scale]
        rows, cols = [self.jac_rows], [self.jac_cols]
        p, dp = self.source_power(t)
        ss = self.src_state
        rows += [ss, np.full(len(ss), self.nf)]
        cols += [ss, ss]
        vals += [dp / self.cap[ss], dp]
        j = sp.csc_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                          shape=(self.n_state, self.n_state))
        return j.toarray() if self.nf <= DENSE_MAX else j

    # ---- control -------------------------------------------------------------------------
    def ctrl_start(self):
        return {"ticks": 0, "on": 0, "integral": 0.0, "last": 0.0}

    def ctrl_tick(self, st, y):
        """One controller tick at state y: sets the held duty; True when it changed."""
        c = self.control
        reading = self._temps(y)[c["sensor"]]
        if c["mode"] == "off":
            duty = 0.0
        elif c["mode"] == "full":
            duty = 1.0
        elif c["mode"] == "on-off":
            if st["ticks"] == 0:
                st["on"] = reading < c["setpoint"]
            elif reading >= c["setpoint"] + 0.5 * c["band"]:
                st["on"] = 0
            elif reading <= c["setpoint"] - 0.5 * c["band"]:
                st["on"] = 1
            duty = 1.0 if st["on"] else 0.0
        else:
            e = c["setpoint"] - reading
            st["integral"] = min(max(st["integral"] + c["ki"] * c["period"] * e, 0.0), 1.0)
            dterm = -c["kd"] * (reading - st["last"]) / c["period"] if st["ticks"] else 0.0
            duty = min(max(c["kp"] * e + st["integral"] + dterm, 0.0), 1.0)
            st["last"] = reading
        st["ticks"] += 1
        changed = duty != self.duty[c["source"]]
        self.duty[c["source"]] = duty
        if self.duty_log is not None:
            self.duty_log.append(duty)
        return changed

    def output_times(self):
        n_out = int(math.ceil(self.t_end / self.step - 1e-9)) + 1
        t = np.arange(n_out) * self.step
        t[-1] = self.t_end
        return t


# ---- solvers ---------------------------------------------------------------------------------
class Work:
    def __init__(self):
        self.nfev = self.njev = self.nlu = self.restarts = 0
        self.duties = []  # the duty decided at each controller tick

    def add(self, r):
        self.nfev += r.nfev
        self.njev += r.njev
        self.nlu += r.nlu


def bdf_plain(net, work):
    """No controller: one solve_ivp call over the run, history on the output grid."""
    times = net.output_times()
    r = solve_ivp(net.rhs, (0.0, net.t_end), net.initial_state(), method="BDF", t_eval=times,
                  rtol=net.rtol, atol=net.atol(), jac=net.jac)
    if not r.success:
        raise RuntimeError("solve_ivp: " + r.message)
    work.add(r)
    return r.y[:net.nf].T


def controlled_start(net, work):
    """The common start of a controlled run: output times, the history (row 0 filled), the
    initial state and the controller memory after the tick at t = 0 (logged in work)."""
    times = net.output_times()
    hist = np.full((len(times), net.nf), np.nan)
    y = net.initial_state()
    st = net.ctrl_start()
    net.duty[:] = 1.0
    net.duty_log = work.duties
    net.ctrl_tick(st, y)
    hist[0] = y[:net.nf]
    return times, hist, y, st


def bdf_tick(net, work):
    """solve_ivp from tick to tick with the duty held."""
    times, hist, y, st = controlled_start(net, work)
    atol, period = net.atol(), net.control["period"]
    k, nxt = 0, 1
    while k * period < net.t_end:
        t0, t1 = k * period, min((k + 1) * period, net.t_end)
        want = [t for t in times[nxt:] if t <= t1]
        t_eval = want if want and want[-1] == t1 else want + [t1]
        r = solve_ivp(net.rhs, (t0, t1), y, method="BDF", t_eval=t_eval, rtol=net.rtol,
                      atol=atol, jac=net.jac)
        if not r.success:
            raise RuntimeError("solve_ivp at t = %g: %s" % (t0, r.message))
        work.add(r)
        work.restarts += 1
        for i in range(len(want)):
            hist[nxt] = r.y[:net.nf, i]
            nxt += 1
        y = r.y[:, -1]
        k += 1
        if k * period <= net.t_end:
            net.ctrl_tick(st, y)
    return hist


def bdf_restart(net, work):
    """scipy's BDF stepper across ticks, restarted only where the duty changes."""
    times, hist, y, st = controlled_start(net, work)
    atol, period = net.atol(), net.control["period"]
    nxt, k_tick = 1, 1

    def make(t0, y0, h):
        return BDF(net.rhs, t0, y0, net.t_end, rtol=net.rtol, atol=atol, jac=net.jac,
                   first_step=h)

    solver = make(0.0, y, None)
    while True:
        msg = solver.step()
        if solver.status == "failed":
            raise RuntimeError("BDF at t = %g: %s" % (solver.t, msg))
        t = solver.t
        dense = None
        restart_at = None
        while k_tick * period <= t:
            tk = k_tick * period
            dense = dense or solver.dense_output()
            while nxt < len(times) and times[nxt] < tk:
                hist[nxt] = dense(times[nxt])[:net.nf]
                nxt += 1
            yk = dense(tk)
            k_tick += 1
            if net.ctrl_tick(st, yk):
                restart_at = (tk, yk)
                break
        t_valid = restart_at[0] if restart_at else t
        while nxt < len(times) and (times[nxt] < t_valid or
                                    (restart_at is None and times[nxt] <= t_valid)):
            if times[nxt] == t:
                hist[nxt] = solver.y[:net.nf]
            else:
                dense = dense or solver.dense_output()
                hist[nxt] = dense(times[nxt])[:net.nf]
            nxt += 1
        if restart_at:
            work.nfev += solver.nfev
            work.njev += solver.njev
            work.nlu += solver.nlu
            work.restarts += 1
            tk, yk = restart_at
            h = min(solver.step_size or period, period)
            while nxt < len(times) and times[nxt] <= tk:
                hist[nxt] = yk[:net.nf]
                nxt += 1
            if tk >= net.t_end:
                break
            solver = make(tk, yk, min(h, net.t_end - tk))
            continue
        if solver.status == "finished":
            break
    work.nfev += solver.nfev
    work.njev += solver.njev
    work.nlu += solver.nlu
    return hist


def euler(net, h):
    """Fixed-step explicit Euler with h dividing the output step and the controller period;
    returns the history on the output grid (temperatures only: the energy totals do not feed
    back) and the number of steps."""
    times = net.output_times()
    hist = np.full((len(times), net.nf), np.nan)
    y = net.initial_state()
    period = net.control["period"] if net.control else None
    st = None
    net.duty[:] = 1.0
    net.duty_log = None
    if net.control:
        st = net.ctrl_start()
        net.ctrl_tick(st, y)
    hist[0] = y[:net.nf]
    nf, t_all, free = net.nf, net.t_all, net.free
    to_free, la, lb, nl = net.to_free, net.link_a, net.link_b, net.n_lin
    lin_g, rad_k = net.lin_g, net.rad_k
    cap_src = net.cap[net.src_state]
    steps_per_tick = int(round(period / h)) if period else 0
    n = 0
    T = y[:nf].copy()
    q = np.empty(len(la))
    for i in range(1, len(times)):
        m = int(round((times[i] - times[i - 1]) / h))
        for _ in range(m):
            t_all[free] = T
            ta, tb = t_all[la], t_all[lb]
            q[:nl] = lin_g * (ta[:nl] - tb[:nl])
            ra, rb = ta[nl:], tb[nl:]
            q[nl:] = rad_k * (ra * ra + rb * rb) * (ra + rb) * (ra - rb)
            dT = to_free @ q
            p, _ = net.source_power(t_all)
            np.add.at(dT, net.src_state, p / cap_src)
            T += h * dT
            n += 1
            if steps_per_tick and n % steps_per_tick == 0:
                yy = np.concatenate([T, np.zeros(3)])
                net.ctrl_tick(st, yy)
        if not np.all(np.isfinite(T)):
            return None, n
        hist[i] = T
    return hist, n


def common_step(a, b):
    """The largest step that divides both a and b (s), through exact fractions."""
    fa, fb = Fraction(a).limit_denominator(10 ** 6), Fraction(b).limit_denominator(10 ** 6)
    return float(Fraction(math.gcd(fa.numerator * fb.denominator, fb.numerator * fa.denominator),
                          fa.denominator * fb.denominator))


def stability_step(net, ref_hist):
    """2 / (a Gershgorin bound of the temperature block's spectral radius), s, at the hottest
    reference state and at the start, at full duty: the largest stable explicit Euler step."""
    rho = 0.0
    net.duty[:] = 1.0
    rows = {0, int(np.argmax(ref_hist.max(axis=1))), len(ref_hist) - 1}
    for r in rows:
        y = np.concatenate([ref_hist[r], np.zeros(3)])
        j = net.jac(0.0, y)
        j = sp.csr_matrix(j)[:net.nf, :net.nf]
        rho = max(rho, float(np.abs(j).sum(axis=1).max()))
    return 2.0 / rho


def read_csv(path, net, with_duty=False):
    """Times, free temperatures (K) and, when asked, the duty column (None without one) of a
    tepid history CSV."""
    with open(path) as f:
        header = f.readline().strip().split(",")
    cols = [header.index(i + "_C") for i in net.free_ids]
    data = np.loadtxt(path, delimiter=",", skiprows=1, ndmin=2)
    if with_duty:
        duty = data[:, header.index("duty")] if "duty" in header else None
        return data[:, 0], data[:, cols] + KELVIN_0C, duty
    return data[:, 0], data[:, cols] + KELVIN_0C


def decisions(net, times, tepid_duty, duties, hist, tepid_hist):
    """Where the controller's decisions of the two runs first part, when the output grid is
    the tick grid (tepid's CSV shows at t_k the duty decided at tick k): the time, the sensor's
    temperature in both runs there, and the largest difference before it."""
    period = net.control["period"]
    if tepid_duty is None or abs(net.step - period) > 1e-12 or len(duties) < len(times):
        return None
    diff = np.flatnonzero(np.abs(np.asarray(duties[:len(times)]) - tepid_duty) > 1e-6)
    out = {"ticks_compared": len(times), "ticks_differing": int(len(diff))}
    if len(diff):
        k = int(diff[0])
        s = net.state_of[net.control["sensor"]]
        out.update({"first_differs_s": float(times[k]),
                    "sensor_tepid_C": float(tepid_hist[k, s] - KELVIN_0C),
                    "sensor_python_C": float(hist[k, s] - KELVIN_0C),
                    "max_diff_before_K": max_diff(hist[:k], tepid_hist[:k]) if k else 0.0})
    return out


def max_diff(a, b):
    if a.shape != b.shape:
        raise RuntimeError("histories differ in shape: %s vs %s" % (a.shape, b.shape))
    if not (np.all(np.isfinite(a)) and np.all(np.isfinite(b))):
        raise RuntimeError("a history has values missing or not finite")
    return float(np.max(np.abs(a - b)))


def timed(fn, runs, budget):
    """Median wall time of up to `runs` calls, stopping early once `budget` seconds are spent
    (at least one call). Returns (median, number of calls, last result)."""
    times, out, spent = [], None, 0.0
    for _ in range(runs):
        t0 = time.perf_counter()
        out = fn()
        dt = time.perf_counter() - t0
        times.append(dt)
        spent += dt
        if spent > budget:
            break
    return statistics.median(times), len(times), out


# python_mode in the CSV is the key (plain, tick, restart); the tables print these names.
MODE_NAMES = {"plain": "solve_ivp over the run", "tick": "solve_ivp tick to tick",
              "restart": "BDF stepper, restart on change"}


def fmt(x, spec):
    return "" if x is None else format(x, spec)


def describe(dec):
    """The decisions comparison in words."""
    if not dec:
        return ""
    if dec["ticks_differing"] == 0:
        return "the same at all %d ticks" % dec["ticks_compared"]
    return ("%d of %d ticks differ, first at %g s (sensor %.5f degC in tepid, %.5f here); "
            "largest difference before it %.1e K" % (
                dec["ticks_differing"], dec["ticks_compared"], dec["first_differs_s"],
                dec["sensor_tepid_C"], dec["sensor_python_C"], dec["max_diff_before_K"]))


def summarise(argv):
    """Write reference.csv, add the reference series to the scaling CSV, print Markdown."""
    p = argparse.ArgumentParser(prog="reference.py summarise")
    p.add_argument("--csv", required=True)
    p.add_argument("--scaling")
    p.add_argument("--load")
    p.add_argument("results", nargs="+")
    a = p.parse_args(argv)
    load = {}
    if a.load:
        with open(a.load) as f:
            for line in f.readlines()[1:]:
                name, _, sec = line.strip().split(",")
                load[name] = float(sec)
    rs = []
    for path in a.results:
        with open(path) as f:
            rs.append(json.load(f))
    cols = ["network", "unknowns", "control", "rtol", "tepid_wall_s", "tepid_load_s",
            "python_mode", "python_solve_s", "python_runs", "python_over_tepid", "scipy_nfev",
            "scipy_njev", "scipy_nlu", "scipy_restarts", "max_diff_K", "ticks_differing",
            "first_decision_differs_s", "max_diff_before_K", "tepid_error_K", "euler_window_s",
            "euler_target_K", "euler_h_stability_s", "euler_h_s", "euler_steps", "euler_s",
            "euler_error_K", "euler_over_tepid", "euler_steps_over_tepid_rhs", "euler_note"]
    lines = [",".join(cols)]
    scaling = []
    for r in rs:
        eu = r.get("euler") or {}
        acc = eu.get("accepted") or {}
        for run in r["runs"]:
            dec = run.get("decisions") or {}
            v = [r["name"], r["unknowns"], r["control"] or "", r["rtol"], r["tepid_seconds"],
                 load.get(r["name"]), run["mode"], run["seconds"], run["timed_runs"],
                 run.get("ratio_python_to_tepid"), run["nfev"], run["njev"], run["nlu"],
                 run["restarts"], run["max_diff_K"], dec.get("ticks_differing"),
                 dec.get("first_differs_s"), dec.get("max_diff_before_K"), eu.get("tepid_error_K"),
                 eu.get("window_s"), eu.get("target_K"), eu.get("h_stability_s"), acc.get("h_s"),
                 acc.get("steps"), acc.get("seconds"), acc.get("error_K"), eu.get("ratio_to_tepid"),
                 eu.get("rhs_ratio_to_tepid"), eu.get("stopped", "")]
            lines.append(",".join("" if x is None else str(x) for x in v))
            if not r["control"] and r["name"].startswith("raw-grid"):
                scaling.append("SciPy solve_ivp BDF (solve only),%d,%r" % (r["unknowns"],
                                                                          run["seconds"]))
        if acc and not r["control"] and r["name"].startswith("raw-grid"):
            scaling.append("explicit Euler at 0.05 K (solve only),%d,%r" % (r["unknowns"],
                                                                           acc["seconds"]))
    with open(a.csv, "w") as f:
        f.write("\n".join(lines) + "\n")
    if a.scaling:
        with open(a.scaling, "a") as f:
            f.write("".join(x + "\n" for x in sorted(
                scaling, key=lambda x: (x.split(",")[0], int(x.split(",")[1])))))

    print("## Side by side: tepid against SciPy solve_ivp (BDF), same files, same tolerances")
    print()
    print("tepid: whole process (`tepid warmup FILE -q`: start, parse, assemble, two steady-state "
          "solves for the metrics, integration, report); load only: `tepid check FILE` (start, "
          "parse, assemble), so tepid - load estimates the rest (its ratio is shown where that is "
          "at least a quarter of the whole; below, the subtraction is mostly noise). SciPy: the integration call(s) "
          "only, after the file is parsed and the network built. Ratios are SciPy / tepid: "
          "above 1 means tepid is faster. Difference: the largest |T_tepid - T_SciPy| over all "
          "free nodes and all output times.")
    print()
    print("| network | unknowns | control | tepid whole process (s) | tepid load only (s) | "
          "SciPy way | SciPy solve (s) | SciPy / tepid | SciPy / (tepid - load) | "
          "SciPy f / J / LU | max difference (K) | controller decisions against tepid's |")
    print("| --- | ---: | --- | ---: | ---: | --- | ---: | ---: | ---: | ---: | ---: | --- |")
    for r in rs:
        ld = load.get(r["name"])
        for run in r["runs"]:
            past_load = None
            if ld is not None and r["tepid_seconds"] and \
                    r["tepid_seconds"] - ld >= 0.25 * r["tepid_seconds"]:
                past_load = run["seconds"] / (r["tepid_seconds"] - ld)
            print("| %s | %d | %s | %s | %s | %s | %s (%d runs) | %s | %s | %d / %d / %d | %s "
                  "| %s |" % (
                r["name"], r["unknowns"], r["control"] or "none", fmt(r["tepid_seconds"], ".4f"),
                fmt(ld, ".4f"), MODE_NAMES[run["mode"]],
                fmt(run["seconds"], ".4f"), run["timed_runs"],
                fmt(run.get("ratio_python_to_tepid"), ".2f"), fmt(past_load, ".2f"),
                run["nfev"], run["njev"],
                run["nlu"], fmt(run["max_diff_K"], ".2e"), describe(run.get("decisions"))))
    print()
    print("## Fixed-step explicit Euler (numpy) at the accuracy of tepid")
    print()
    print("Accuracy: the largest temperature difference, over all free nodes and output times, "
          "from a tight reference run of tepid (`--set run.tolerance=1e-10`). Euler is accepted "
          "at the first step, halving from the largest power-of-two fraction of the output "
          "interval (and controller period) below the explicit stability limit 2/rho "
          "(Gershgorin bound on the Jacobian), whose error is within tepid's own error + 0.05 K.")
    print()
    print("| network | unknowns | compared up to (s) | tepid error (K) | target (K) | "
          "stability limit (s) | accepted step (s) | Euler steps | Euler error (K) | "
          "Euler time (s) | Euler / tepid time | Euler steps / tepid RHS evals |")
    print("| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |")
    for r in rs:
        eu = r.get("euler")
        if not eu:
            continue
        acc = eu.get("accepted")
        if acc:
            print("| %s | %d | %g | %s | %s | %s | %s | %d | %s | %s | %s | %s |" % (
                r["name"], r["unknowns"], eu.get("window_s", 0), fmt(eu["tepid_error_K"], ".1e"),
                fmt(eu["target_K"], ".3f"), fmt(eu["h_stability_s"], ".3g"),
                fmt(acc["h_s"], ".4g"), acc["steps"], fmt(acc["error_K"], ".3f"),
                fmt(acc["seconds"], ".3f"), fmt(eu.get("ratio_to_tepid"), ".1f"),
                fmt(eu.get("rhs_ratio_to_tepid"), ".1f")))
        else:
            last = eu["tries"][-1] if eu["tries"] else {}
            print("| %s | %d | %g | %s | %s | %s | not reached (last %s s: %s K) | | | | | %s |" % (
                r["name"], r["unknowns"], eu.get("window_s", 0), fmt(eu["tepid_error_K"], ".1e"),
                fmt(eu["target_K"], ".3f"), fmt(eu["h_stability_s"], ".3g"),
                fmt(last.get("h_s"), ".4g"), fmt(last.get("error_K"), ".3f"),
                eu.get("stopped", "")))
    return 0


def main(argv):
    if argv and argv[0] == "summarise":
        return summarise(argv[1:])
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("config")
    p.add_argument("--tepid-csv", required=True, help="tepid's history at the config's tolerance")
    p.add_argument("--ref-csv", help="tepid's history at run.tolerance 1e-10 (for Euler)")
    p.add_argument("--tepid-seconds", type=float, help="tepid's whole-process wall time, s")
    p.add_argument("--tepid-rhs", type=int, help="tepid's right-hand-side evaluations")
    p.add_argument("--modes", default="tick,restart",
                   help="with a controller: tick, restart or both (default both)")
    p.add_argument("--euler", action="store_true", help="also the explicit Euler search")
    p.add_argument("--euler-slack", type=float, default=0.05,
                   help="K allowed beyond tepid's own error (default 0.05)")
    p.add_argument("--runs", type=int, default=5, help="timed runs (median; default 5)")
    p.add_argument("--budget", type=float, default=120.0,
                   help="seconds after which no further timed run starts (default 120)")
    p.add_argument("--euler-budget", type=float, default=300.0,
                   help="seconds an Euler run may be predicted to take (default 300)")
    p.add_argument("--name", help="the network's name in the tables (default the file name)")
    p.add_argument("--json", help="write the results as JSON here (default standard output)")
    a = p.parse_args(argv)

    net = Network(a.config)
    t_csv, tepid_hist, tepid_duty = read_csv(a.tepid_csv, net, with_duty=True)
    res = {"name": a.name or a.config.rsplit("/", 1)[-1], "config": a.config, "unknowns": net.nf, "state_size": net.n_state,
           "rtol": net.rtol, "control": net.control["mode"] if net.control else None,
           "scipy": scipy.__version__, "numpy": np.__version__,
           "tepid_seconds": a.tepid_seconds, "runs": []}
    if len(t_csv) != len(net.output_times()) or np.max(np.abs(t_csv - net.output_times())) > 1e-6:
        raise RuntimeError("tepid's CSV is not on the config's output grid")

    modes = ["plain"] if not net.control else [m for m in a.modes.split(",") if m]
    for mode in modes:
        fn = {"plain": bdf_plain, "tick": bdf_tick, "restart": bdf_restart}[mode]
        works = []

        def call():
            w = Work()
            works.append(w)
            return fn(net, w)
        med, n, hist = timed(call, a.runs, a.budget)
        w = works[-1]
        row = {"mode": mode, "seconds": med, "timed_runs": n, "nfev": w.nfev, "njev": w.njev,
               "nlu": w.nlu, "restarts": w.restarts,
               "max_diff_K": max_diff(hist, tepid_hist)}
        if a.tepid_seconds:
            row["ratio_python_to_tepid"] = med / a.tepid_seconds
        if net.control:
            row["decisions"] = decisions(net, t_csv, tepid_duty, w.duties, hist, tepid_hist)
        res["runs"].append(row)

    if a.euler and a.ref_csv:
        _, ref, ref_duty = read_csv(a.ref_csv, net, with_duty=True)
        # With a controller, a reading that passes a switching threshold within the solver's
        # error of it at some tick makes two accurate runs switch one tick apart, and their
        # histories part for good. Accuracy is then judged up to the first tick where tepid's
        # run and the tight reference decide differently (seen when the output grid is the
        # tick grid); before it both runs follow the same switching sequence.
        window = len(ref)
        if net.control and tepid_duty is not None and ref_duty is not None and \
                abs(net.step - net.control["period"]) < 1e-12:
            differ = np.flatnonzero(np.abs(tepid_duty - ref_duty) > 1e-6)
            if len(differ):
                window = int(differ[0])
        tepid_err = max_diff(tepid_hist[:window], ref[:window])
        target = tepid_err + a.euler_slack
        base = net.step if not net.control else common_step(net.step, net.control["period"])
        h_stab = stability_step(net, ref)
        h = base
        while h > h_stab:
            h /= 2.0
        eu = {"target_K": target, "tepid_error_K": tepid_err, "h_stability_s": h_stab,
              "window_s": float(t_csv[window - 1]), "tries": []}
        last = None
        for _ in range(30):
            n_steps = int(round(net.t_end / h))
            if last and last["seconds"] / last["steps"] * n_steps > a.euler_budget:
                eu["stopped"] = "the next halving would take about %.0f s (budget %.0f s)" % (
                    last["seconds"] / last["steps"] * n_steps, a.euler_budget)
                break
            t0 = time.perf_counter()
            hist, n = euler(net, h)
            dt = time.perf_counter() - t0
            err = max_diff(hist[:window], ref[:window]) if hist is not None else float("inf")
            last = {"h_s": h, "steps": n, "seconds": dt, "error_K": err}
            eu["tries"].append(last)
            if err <= target:
                eu["accepted"] = last
                if a.tepid_seconds:
                    eu["ratio_to_tepid"] = dt / a.tepid_seconds
                if a.tepid_rhs:
                    eu["rhs_ratio_to_tepid"] = n / a.tepid_rhs
                break
            h /= 2.0
        res["euler"] = eu

    text = json.dumps(res, indent=1)
    if a.json:
        with open(a.json, "w") as f:
            f.write(text + "\n")
    else:
        print(text)
    return 0


if __name__ == "__main__":
    try:
        sys.exit(main(sys.argv[1:]))
    except (ConfigError, KeyError, RuntimeError, OSError) as e:
        sys.stderr.write("reference.py: %s\n" % e)
        sys.exit(1)
