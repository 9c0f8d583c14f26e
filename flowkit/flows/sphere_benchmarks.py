"""Presets t1s1, t2s2: the sphere-dynamo benchmark flows of Proc. R. Soc. Lond. A 425 (1989) 407-429.

A toroidal field ``t = curl(f(r) P_l(cos theta) x)`` and a poloidal field
``s = curl curl(g(r) P_l(cos theta) x)`` (``P_l`` the Legendre polynomial,
``x`` the position vector), ``u = t + epsilon s``. In spherical components

    t_phi = f sin(theta) P_l'(cos theta),
    s_r = l(l+1) g P_l / r,   s_theta = -(r g)' sin(theta) P_l'(cos theta) / r.

- ``"t1s1"``: ``l = 1``, ``f = g = sin(pi r)``, ``epsilon = 0.17``;
- ``"t2s2"``: ``l = 2``, ``f = g = r sin(pi r)``, ``epsilon = 0.14``.

(The paper writes the profiles against the unit radial vector, one more factor
``r`` each: ``r sin(pi r)`` and ``r^2 sin(pi r)``; cited from memory.) Both vanish
in ``u . n`` on ``r = 1`` because ``sin(pi) = 0``.

The velocity is written as numba code directly (a sympy route differentiates
``sin(pi sqrt(x^2 + y^2 + z^2))`` for a minute); the gradient, used by the
trajectory analyses, is the library's fourth-order central difference.
"""

from __future__ import annotations

from flowkit.flows.base import FlowFamily

_VELOCITY = """
@njit(cache=CACHE, error_model="numpy")
def _user_velocity(x, y, z, t, p):
    eps = p[0]
    r = math.sqrt(x * x + y * y + z * z)
    s = math.sqrt(x * x + y * y)
    if r < 1e-12:
        return (0.0, 0.0, {origin_z} * eps)
    ct = z / r
    st = s / r
    if s > 1e-300:
        cp = x / s
        sp = y / s
    else:
        cp = 1.0
        sp = 0.0
    sn = math.sin(math.pi * r)
    cs = math.cos(math.pi * r)
{profiles}
    er = (st * cp, st * sp, ct)
    et = (ct * cp, ct * sp, -st)
    ep = (-sp, cp, 0.0)
    return (ur * er[0] + ut * et[0] + up * ep[0],
            ur * er[1] + ut * et[1] + up * ep[1],
            ur * er[2] + ut * et[2] + up * ep[2])
"""

# per flow: degree, epsilon, numba lines giving ur, ut, up; velocity at the centre (z component / eps)
_FLOWS = {
    "t1s1": (1, 0.17, """
    # l = 1, f = g = sin(pi r): P1' = 1; (r g)' = sin + pi r cos
    up = sn * st
    ur = eps * 2.0 * sn * ct / r
    ut = -eps * (sn + math.pi * r * cs) * st / r
""", "2.0 * math.pi"),
    "t2s2": (2, 0.14, """
    # l = 2, f = g = r sin(pi r): P2' = 3 cos; (r g)' = 2 r sin + pi r^2 cos
    up = r * sn * st * 3.0 * ct
    ur = eps * 6.0 * sn * 0.5 * (3.0 * ct * ct - 1.0)
    ut = -eps * (2.0 * sn + math.pi * r * cs) * st * 3.0 * ct
""", "0.0"),
}

BENCHMARK_FLOWS = tuple(_FLOWS)


def benchmark_family(name: str) -> FlowFamily:
    """The family of ``"t1s1"`` or ``"t2s2"`` (registered as presets in :mod:`flowkit.flows.registry`)."""
    from flowkit.flows.custom import _FD_CODE, FD_RULE

    degree, eps, profiles, origin = _FLOWS[name]
    code = "import math\n" + _VELOCITY.format(profiles=profiles.rstrip("\n"), origin_z=origin) + _FD_CODE
    prof = "sin(pi r)" if degree == 1 else "r sin(pi r)"
    return FlowFamily(
        name=name,
        formula=(f"curl(f P{degree} x) + epsilon curl curl(f P{degree} x), f = {prof}",),
        param_names=("epsilon",),
        defaults=(eps,),
        domain="ball",
        code=code,
        gradient_method=FD_RULE,
        structure={"representation": "toroidal-poloidal benchmark flow", "degree": degree, "profile": prof,
                   "recipe": {"preset": name}, "source": "Proc. R. Soc. Lond. A 425 (1989) 407-429"},
        description=f"sphere-dynamo benchmark flow {name} (Proc. R. Soc. Lond. A 425, 1989): toroidal + "
                    f"epsilon poloidal, degree {degree}, profile {prof}",
    )
