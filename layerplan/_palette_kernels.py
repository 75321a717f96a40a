"""Compiled inner loop of the palette search (:mod:`layerplan.palette` validates and packs its inputs)."""

from __future__ import annotations

import math

from numba import njit


@njit(cache=True, nogil=True)
def capped_costs(dist, weight, base, out):
    """``out[c] = Σ_i weight[i] · min(base[i], dist[i, c])`` for every candidate ``c``.

    The weighted floor of the picture if candidate ``c`` joined the paints whose per-bin best
    distance is ``base``: the one sum both the greedy seeding and every swap of the k-medoids
    search need, made without a (bins × candidates) temporary.
    """
    n, m = dist.shape
    for c in range(m):
        out[c] = 0.0
    for i in range(n):
        w = weight[i]
        b = base[i]
        for c in range(m):
            d = dist[i, c]
            out[c] += w * (d if d < b else b)


@njit(cache=True, nogil=True)
def de00_to_row(L1, a1, b1, table_lab, out):
    """CIEDE2000 (kL = kC = kH = 1) from one colour to every row of ``table_lab``.

    The formula exactly as in Sharma, Wu & Dalal (2005), eqs. (1)-(22), compiled so a
    whole mix table is searched per target without (targets × mixes) temporaries; checked
    against :func:`layerplan.colour.delta_e00` in the tests.
    """
    deg = math.pi / 180.0
    p25_7 = 25.0**7
    c1 = math.hypot(a1, b1)
    for m in range(table_lab.shape[0]):
        L2 = table_lab[m, 0]
        a2 = table_lab[m, 1]
        b2 = table_lab[m, 2]
        c2 = math.hypot(a2, b2)
        cbar = (c1 + c2) * 0.5
        cbar7 = cbar * cbar * cbar
        cbar7 = cbar7 * cbar7 * cbar
        g = 0.5 * (1.0 - math.sqrt(cbar7 / (cbar7 + p25_7)))
        a1p = (1.0 + g) * a1
        a2p = (1.0 + g) * a2
        c1p = math.hypot(a1p, b1)
        c2p = math.hypot(a2p, b2)
        h1p = math.atan2(b1, a1p) / deg  # atan2(0, 0) = 0, as the formula wants
        if h1p < 0.0:
            h1p += 360.0
        h2p = math.atan2(b2, a2p) / deg
        if h2p < 0.0:
            h2p += 360.0
        dl = L2 - L1
        dc = c2p - c1p
        cc = c1p * c2p
        if cc == 0.0:
            dh = 0.0
        else:
            dh = h2p - h1p
            if dh > 180.0:
                dh -= 360.0
            elif dh < -180.0:
                dh += 360.0
        dH = 2.0 * math.sqrt(cc) * math.sin(dh * deg * 0.5)
        lbar = (L1 + L2) * 0.5
        cbarp = (c1p + c2p) * 0.5
        if cc == 0.0:
            hbar = h1p + h2p
        elif abs(h1p - h2p) <= 180.0:
            hbar = (h1p + h2p) * 0.5
        elif h1p + h2p < 360.0:
            hbar = (h1p + h2p + 360.0) * 0.5
        else:
            hbar = (h1p + h2p - 360.0) * 0.5
        t = (
            1.0
            - 0.17 * math.cos((hbar - 30.0) * deg)
            + 0.24 * math.cos(2.0 * hbar * deg)
            + 0.32 * math.cos((3.0 * hbar + 6.0) * deg)
            - 0.20 * math.cos((4.0 * hbar - 63.0) * deg)
        )
        dtheta = 30.0 * math.exp(-(((hbar - 275.0) / 25.0) ** 2))
        cbarp7 = cbarp * cbarp * cbarp
        cbarp7 = cbarp7 * cbarp7 * cbarp
        rc = 2.0 * math.sqrt(cbarp7 / (cbarp7 + p25_7))
        l50 = (lbar - 50.0) ** 2
        sl = 1.0 + 0.015 * l50 / math.sqrt(20.0 + l50)
        sc = 1.0 + 0.045 * cbarp
        sh = 1.0 + 0.015 * cbarp * t
        rt = -math.sin(2.0 * dtheta * deg) * rc
        x = dl / sl
        y = dc / sc
        z = dH / sh
        out[m] = math.sqrt(max(0.0, x * x + y * y + z * z + rt * y * z))
