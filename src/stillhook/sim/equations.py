"""Right-hand side of the large-angle equations, written once for the numpy reference and the C kernel.

State y = [theta1, theta2, theta1', theta2'] (rad, rad/s). Inputs over one drive cycle: trolley
acceleration a = x'' (m/s^2, constant over the cycle), rope length L1, its rate L1d = L1' and
acceleration L1dd = L1''. Rig constants: m1, m2 (kg), L2 (m), g (m/s^2), zeta (modal damping ratio).

Lagrange's equations for q = [theta1, theta2] with D = theta1 - theta2 (derivation in
:mod:`stillhook.sim.dynamics`)::

    M11 theta1'' + M12 theta2'' = f1,   M12 theta1'' + M22 theta2'' = f2
    M11 = (m1 + m2) L1^2,  M12 = m2 L1 L2 cos D,  M22 = m2 L2^2
    f1 = -(m1 + m2) L1 (a c1 + 2 L1' theta1' + g s1) - m2 L1 L2 theta2'^2 sin D - (C q')_1
    f2 = -m2 L2 (a c2 + L1'' sin D + 2 L1' theta1' cos D - L1 theta1'^2 sin D + g s2) - (C q')_2

solved by Cramer's rule. C is the modal damping matrix of the linearized rig at the current rope
length, C = M0 Phi diag(2 zeta w) Phi^T M0 (M0, K0 the linearized mass and stiffness matrices,
Phi mass-normalized). With A = M0^-1 K0 = Phi diag(w^2) Phi^-1 this is C = 2 zeta M0 sqrt(A), and
the square root of a 2 x 2 matrix with positive eigenvalues is sqrt(A) = (A + s I) / t with
s = sqrt(det A) = w1 w2 and t = sqrt(tr A + 2 s) = w1 + w2, so::

    C = 2 zeta (K0 + s M0) / t,   s = g sqrt((1 + R) / (L1 L2)),   t = sqrt((1 + R) g (1/L1 + 1/L2) + 2 s)

(R = m2/m1; w1^2 + w2^2 and w1^2 w2^2 from the frequency equation). A single pendulum (no payload
mass or no rigging) keeps theta2 = theta1 and swings with the whole hanging mass::

    theta1'' = -(a c1 + 2 L1' theta1' + g s1) / L1 - 2 zeta sqrt(g / L1) theta1'

The equations are text in the syntax C and Python share (``+ - * /``, parentheses, ``sin``,
``cos``, ``sqrt``, one assignment per line), compiled once into a numpy function and emitted once
into the C kernel: the two engines cannot drift apart.

Notes
-----
Double pendulum and its frequency equation: Kibble & Berkshire, *Classical Mechanics*, 5th ed.,
Imperial College Press, 2004. Square root of a 2 x 2 matrix: Levinger, "The square root of a 2 x 2
matrix", Mathematics Magazine 53(4):222-224, 1980 (from memory). Modal damping matrix: Caughey &
O'Kelly, J. Appl. Mech. 32(3):583-588, 1965 (from memory).
"""

from __future__ import annotations

import numpy as np

__all__ = ["DOUBLE_PENDULUM", "INPUTS", "OUTPUTS", "SINGLE_PENDULUM", "c_functions", "numpy_rhs"]

#: Names the right-hand side reads: state, cycle inputs, rig constants.
INPUTS = ("th1", "th2", "w1", "w2", "a", "L1", "L1d", "L1dd", "m1", "m2", "L2", "g", "zeta")
#: Names it defines for the caller: theta1', theta2', theta1'', theta2''.
OUTPUTS = ("dth1", "dth2", "dw1", "dw2")

DOUBLE_PENDULUM = """
s1 = sin(th1)
c1 = cos(th1)
s2 = sin(th2)
c2 = cos(th2)
sD = s1 * c2 - c1 * s2
cD = c1 * c2 + s1 * s2
M11 = (m1 + m2) * L1 * L1
M12 = m2 * L1 * L2 * cD
M22 = m2 * L2 * L2
s = g * sqrt((m1 + m2) / (m1 * L1 * L2))
t = sqrt((m1 + m2) * g * (L1 + L2) / (m1 * L1 * L2) + 2.0 * s)
C11 = 2.0 * zeta * ((m1 + m2) * g * L1 + s * (m1 + m2) * L1 * L1) / t
C12 = 2.0 * zeta * s * m2 * L1 * L2 / t
C22 = 2.0 * zeta * (m2 * g * L2 + s * m2 * L2 * L2) / t
f1 = -(m1 + m2) * L1 * (a * c1 + 2.0 * L1d * w1 + g * s1) - m2 * L1 * L2 * w2 * w2 * sD - C11 * w1 - C12 * w2
f2 = -m2 * L2 * (a * c2 + L1dd * sD + 2.0 * L1d * w1 * cD - L1 * w1 * w1 * sD + g * s2) - C12 * w1 - C22 * w2
det = M11 * M22 - M12 * M12
dth1 = w1
dth2 = w2
dw1 = (M22 * f1 - M12 * f2) / det
dw2 = (M11 * f2 - M12 * f1) / det
"""

SINGLE_PENDULUM = """
s1 = sin(th1)
c1 = cos(th1)
dth1 = w1
dth2 = w1
dw1 = -(a * c1 + 2.0 * L1d * w1 + g * s1) / L1 - 2.0 * zeta * sqrt(g / L1) * w1
dw2 = dw1
"""


def _assignments(text: str) -> list[tuple[str, str]]:
    out = []
    for line in text.strip().splitlines():
        name, expr = (part.strip() for part in line.split("=", 1))
        out.append((name, expr))
    return out


def _python_function(name: str, text: str):
    body = "\n".join(f"    {n} = {e}" for n, e in _assignments(text))
    src = f"def {name}({', '.join(INPUTS)}):\n{body}\n    return {', '.join(OUTPUTS)}\n"
    namespace = {"sin": np.sin, "cos": np.cos, "sqrt": np.sqrt}
    exec(compile(src, f"<stillhook.sim.equations.{name}>", "exec"), namespace)  # our own text, above
    return namespace[name]


_RHS = {False: _python_function("double_pendulum", DOUBLE_PENDULUM),
        True: _python_function("single_pendulum", SINGLE_PENDULUM)}


def numpy_rhs(single: bool):
    """The right-hand side as a numpy function ``f(*INPUTS) -> OUTPUTS`` (scalars or arrays broadcast).

    Parameters
    ----------
    single : bool
        True for the single-pendulum equations (``Rig.is_single_pendulum``).
    """
    return _RHS[bool(single)]


def c_functions() -> str:
    """C99 text of ``static void shk_rhs_double(...)`` and ``shk_rhs_single(...)`` (same arguments).

    Each takes the INPUTS as ``double`` values and writes the OUTPUTS through ``double *`` pointers.
    """
    params = ", ".join([f"double {n}" for n in INPUTS] + [f"double *out_{n}" for n in OUTPUTS])
    parts = []
    for name, text in (("shk_rhs_double", DOUBLE_PENDULUM), ("shk_rhs_single", SINGLE_PENDULUM)):
        lines = [f"static void {name}({params})", "{"]
        lines += [f"    const double {n} = {e};" for n, e in _assignments(text)]
        lines += [f"    *out_{n} = {n};" for n in OUTPUTS]
        lines.append("}")
        parts.append("\n".join(lines))
    return "\n\n".join(parts) + "\n"
