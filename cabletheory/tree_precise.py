"""A passive tree's transfer impedance in mpmath, for checks.

The recursion of :mod:`cabletheory.tree_laplace` written again, one piece at a time, with each
piece's two-port matrix in plain cosh and sinh (cylinders) or unscaled mpmath Bessel functions
(frusta) and the general two-port formulas throughout: an independent high-precision path that
the vectorised solver is tested against (``tests/test_tree_laplace.py``,
``tests/test_tree_time.py``). Slow; never used to answer a user.
"""

from __future__ import annotations

from .tree_laplace import PassiveTree, Site, _network, _path

__all__ = ["transfer_impedance_precise"]


def transfer_impedance_precise(cell: PassiveTree, s: complex, source: Site | None, record: Site, *,
                               digits: int = 30):
    r"""The transfer impedance of :func:`transfer_impedance` at one s, in mpmath at ``digits`` digits.

    The same recursion written with each piece's two-port matrix in plain cosh and sinh (cylinders)
    or unscaled mpmath Bessel functions (frusta) and the general two-port formulas throughout, one
    piece at a time; for checks only (slow). Returns an ``mpmath.mpc`` in Ω.

    References
    ----------
    Koch & Poggio (1985) J. Neurosci. Methods 12:303; mpmath (Johansson et al.), arbitrary precision.
    """
    import mpmath

    net = _network(cell, [record] if source is None else [record, source])
    tapered = set(net.tapered.tolist())
    row = {k: j for j, k in enumerate(net.tapered.tolist())}
    with mpmath.workdps(digits):
        s_mp = mpmath.mpc(s)
        n = net.size
        two_port = []
        for k in range(n):
            q = mpmath.sqrt(1 + mpmath.mpf(float(net.tau[k])) * s_mp)
            if k in tapered:  # cabletheory.tree.frustum_transfer with z scaled by q (unscaled Bessel functions)
                j = row[k]
                a, b = mpmath.mpf(float(net.proximal[j])), mpmath.mpf(float(net.distal[j]))
                slope = (b - a) / mpmath.mpf(float(net.lengths[j]))
                c = 4 * mpmath.mpf(net.axial_resistivity) / mpmath.mpf(float(net.membrane_resistivity[j]))
                z0, z1 = (2 * mpmath.sqrt(c * d) / abs(slope) * q for d in (a, b))
                kk = mpmath.pi * slope / (4 * mpmath.mpf(net.axial_resistivity))
                i1_0, i1_1 = mpmath.besseli(1, z0), mpmath.besseli(1, z1)
                k1_0, k1_1 = mpmath.besselk(1, z0), mpmath.besselk(1, z1)
                p0, p1 = z0 / 2 * mpmath.besseli(2, z0), z1 / 2 * mpmath.besseli(2, z1)
                q0, q1 = z0 / 2 * mpmath.besselk(2, z0), z1 / 2 * mpmath.besselk(2, z1)
                ratio = mpmath.sqrt(b / a)
                two_port.append((2 * ratio * (i1_0 * q1 + k1_0 * p1),
                                 2 / (kk * mpmath.sqrt(a * b)) * (k1_0 * i1_1 - i1_0 * k1_1),
                                 2 * kk * mpmath.sqrt(a * b) * (q0 * p1 - p0 * q1),
                                 2 / ratio * (p0 * k1_1 + q0 * i1_1)))
            else:  # [[cosh u, sinh u/(G∞q)], [G∞q sinh u, cosh u]]
                u = mpmath.mpf(float(net.electrotonic[k])) * q
                gq = mpmath.mpf(float(net.g_inf[k])) * q
                two_port.append((mpmath.cosh(u), mpmath.sinh(u) / gq, gq * mpmath.sinh(u), mpmath.cosh(u)))
        load = [mpmath.mpc(0)] + [mpmath.mpc(float(g)) for g in net.shunt]
        y_in: list = [None] * n
        for k in range(n - 1, -1, -1):
            t11, t12, t21, t22 = two_port[k]
            y_in[k] = t22 / t12 if net.killed[k] else (t21 + t22 * load[k + 1]) / (t11 + t12 * load[k + 1])
            load[int(net.parent_node[k])] += y_in[k]
        load[0] += mpmath.mpf(net.soma_conductance) * (1 + mpmath.mpf(net.soma_tau) * s_mp)
        total: list = [load[0]] + [None] * n
        back: list = [None] * n
        for k in range(n):
            t11, t12, t21, t22 = two_port[k]
            back[k] = total[int(net.parent_node[k])] - y_in[k]
            total[k + 1] = (mpmath.inf if net.killed[k] else
                            load[k + 1] + (t21 + t11 * back[k]) / (t22 + t12 * back[k]))
        b_node = int(net.nodes[0])
        a_node = b_node if source is None else int(net.nodes[1])
        if total[a_node] == mpmath.inf:
            return mpmath.mpc(0)
        z = 1 / total[a_node]
        up, down = _path(net, a_node, b_node)
        for k in up.tolist():
            t11, t12, t21, t22 = two_port[k]
            z /= t22 + t12 * back[k]
        for k in down.tolist():
            if net.killed[k]:
                return mpmath.mpc(0)
            t11, t12, t21, t22 = two_port[k]
            z /= t11 + t12 * load[k + 1]
        return z
