"""Wilson and Martinez (1997) HEOM and HVDM written out formula by formula, for the tests.

Slow on purpose: plain loops over attributes and classes, nothing shared with
curate. ``rows`` is a list of lists with ``None`` for a missing value;
``nominal[a]`` says whether attribute ``a`` is nominal. Sources: the paper's
equations 6 and 7 (HEOM with overlap and range_a), 11 to 15 (HVDM with
|x - y| / (4 sigma_a) and the normalised vdm N2), and its rule that an attribute
with a missing value in either row is at distance 1. sigma is the population
standard deviation of the present values (curate's documented choice; the
paper does not say which).
"""

from __future__ import annotations

import math


def _present(rows, a):
    return [r[a] for r in rows if r[a] is not None]


def heom_table(rows, nominal):
    """Per-attribute range (numeric) used by HEOM's range_diff."""
    out = []
    for a, is_nominal in enumerate(nominal):
        values = _present(rows, a)
        out.append(None if is_nominal else max(values) - min(values))
    return out


def heom(x, y, nominal, ranges, weights=None):
    """HEOM(x, y) = sqrt(sum_a w_a d_a^2), overlap for nominal, |x-y|/range for numeric."""
    total = 0.0
    for a, is_nominal in enumerate(nominal):
        w = 1.0 if weights is None else weights[a]
        if x[a] is None or y[a] is None:
            d = 1.0
        elif is_nominal:
            d = 0.0 if x[a] == y[a] else 1.0
        else:
            d = 0.0 if ranges[a] == 0 else abs(x[a] - y[a]) / ranges[a]
        total += w * d * d
    return math.sqrt(total)


def hvdm_table(rows, labels, nominal):
    """Per attribute: sigma (numeric) or {value: {class: N_axc}} and {value: N_ax} (nominal)."""
    classes = sorted(set(labels))
    out = []
    for a, is_nominal in enumerate(nominal):
        if not is_nominal:
            values = _present(rows, a)
            mean = sum(values) / len(values)
            out.append(math.sqrt(sum((v - mean) ** 2 for v in values) / len(values)))
            continue
        n_axc: dict = {}
        n_ax: dict = {}
        for r, c in zip(rows, labels, strict=True):
            if r[a] is None:
                continue
            n_axc.setdefault(r[a], {k: 0 for k in classes})[c] += 1
            n_ax[r[a]] = n_ax.get(r[a], 0) + 1
        out.append((n_axc, n_ax, classes))
    return out


def hvdm(x, y, nominal, table):
    """HVDM(x, y) = sqrt(sum_a d_a^2) with normalised_vdm N2 and normalised_diff."""
    total = 0.0
    for a, is_nominal in enumerate(nominal):
        if x[a] is None or y[a] is None:
            d = 1.0
        elif is_nominal:
            n_axc, n_ax, classes = table[a]
            s = 0.0
            for c in classes:
                s += (n_axc[x[a]][c] / n_ax[x[a]] - n_axc[y[a]][c] / n_ax[y[a]]) ** 2
            d = math.sqrt(s)
        else:
            sigma = table[a]
            d = 0.0 if sigma == 0 else abs(x[a] - y[a]) / (4 * sigma)
        total += d * d
    return math.sqrt(total)
