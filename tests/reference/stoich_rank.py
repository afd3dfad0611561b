"""Exact stoichiometric analysis with Python's fractions, as an outside reference for
rxnet's rank, independent reactions, dependent combinations and conservation laws
(tests/stoich_reference.rs compares against stoich_rank.json; `cargo test` never runs Python).

Written from the definitions, independently of rxnet's code (plain dense Gauss-Jordan
elimination over the rationals, fractions.Fraction, no sparse tricks, no modular arithmetic):
- S is the stoichiometric matrix, species x reactions, nu_ij net products minus reactants;
- rank S = number of independent reactions (Denbigh, The Principles of Chemical Equilibrium;
  from memory);
- independent reactions: greedy in file order, reaction j independent when its column is not
  a combination of the columns before it = the pivot columns of the reduced row echelon form;
  each dependent column is sum_k R_kj col_(p_k), R the RREF (standard linear algebra);
- conservation laws: basis of {y : y^T S = 0}, one vector per free column f of the RREF of
  S^T (x_f = 1, x_(p_k) = -R_kf), scaled to coprime integers, first non-zero entry positive.
  Species that no reaction changes are left out of S (each is its own law), as rxnet does.

The networks: three textbook-sized ones (invented demo values; the rank facts are common
practice: steam reforming has 2 independent reactions among 3, the water-gas/methanation set
has 3 independent among 4 with the element bound 6 - 3 = 3) and one generated network read
from standard input.

Command (from the repository root):
    target/release/rxnet generate --species 50 --reactions 150 --seed 1 \
        | python3 tests/reference/stoich_rank.py > tests/reference/stoich_rank.json
Python 3.11.7, fractions from its standard library.
"""

import json
import re
import sys
from fractions import Fraction


def parse_side(text):
    """'2 A + B' -> {'A': 2, 'B': 1} (coefficients as Fractions)."""
    out = {}
    for term in text.split(" + "):
        term = term.strip()
        m = re.fullmatch(r"(?:([0-9.]+(?:/[0-9]+)?)\s+)?(\S+)", term)
        coef = Fraction(m.group(1)) if m.group(1) else Fraction(1)
        out[m.group(2)] = out.get(m.group(2), Fraction(0)) + coef
    return out


def net_stoich(equation):
    lhs, rhs = re.split(r"\s*(?:->|<=>|=)\s*", equation)
    nu = {}
    for s, c in parse_side(lhs).items():
        nu[s] = nu.get(s, Fraction(0)) - c
    for s, c in parse_side(rhs).items():
        nu[s] = nu.get(s, Fraction(0)) + c
    return {s: c for s, c in nu.items() if c != 0}


def rref(rows, ncols):
    """Gauss-Jordan over the rationals: (R, pivot columns)."""
    a = [list(r) for r in rows]
    pivots = []
    r = 0
    for c in range(ncols):
        p = next((i for i in range(r, len(a)) if a[i][c] != 0), None)
        if p is None:
            continue
        a[r], a[p] = a[p], a[r]
        lead = a[r][c]
        a[r] = [x / lead for x in a[r]]
        for i in range(len(a)):
            if i != r and a[i][c] != 0:
                f = a[i][c]
                a[i] = [x - f * y for x, y in zip(a[i], a[r])]
        pivots.append(c)
        r += 1
        if r == len(a):
            break
    return a, pivots


def analyse(name, species_order, reactions):
    """reactions: list of (id, equation)."""
    nus = [net_stoich(eq) for _, eq in reactions]
    changed = {s for nu in nus for s in nu}
    species = [s for s in species_order if s in changed]
    row = {s: i for i, s in enumerate(species)}
    n, m = len(species), len(reactions)
    S = [[Fraction(0)] * m for _ in range(n)]
    for j, nu in enumerate(nus):
        for s, c in nu.items():
            S[row[s]][j] = c
    R, piv = rref(S, m)
    ids = [rid for rid, _ in reactions]
    dependent = {}
    for j in range(m):
        if j in piv:
            continue
        dependent[ids[j]] = {
            ids[p]: str(R[k][j]) for k, p in enumerate(piv) if R[k][j] != 0
        }
    St = [[S[i][j] for i in range(n)] for j in range(m)]
    Rt, pivt = rref(St, n)
    laws = []
    for f in range(n):
        if f in pivt:
            continue
        x = [Fraction(0)] * n
        x[f] = Fraction(1)
        for k, p in enumerate(pivt):
            x[p] = -Rt[k][f]
        # Coprime integers, first non-zero entry positive.
        den = 1
        for v in x:
            den = den * v.denominator // gcd(den, v.denominator)
        ints = [int(v * den) for v in x]
        g = 0
        for v in ints:
            g = gcd(g, abs(v))
        first = next(v for v in ints if v != 0)
        g = g if first > 0 else -g
        laws.append({species[i]: str(v // g) for i, v in enumerate(ints) if v != 0})
    triplets = [
        [i, j, str(S[i][j])] for i in range(n) for j in range(m) if S[i][j] != 0
    ]
    return {
        "name": name,
        "species": species,
        "reactions": ids,
        "entries": triplets,
        "rank": len(piv),
        "independent": [ids[p] for p in piv],
        "dependent": dependent,
        "conservation_laws": laws,
    }


def gcd(a, b):
    while b:
        a, b = b, a % b
    return abs(a)


TEXTBOOK = [
    (
        "steam reforming",
        ["CH4", "H2O", "CO", "CO2", "H2"],
        [
            ("reform", "CH4 + H2O -> CO + 3 H2"),
            ("shift", "CO + H2O -> CO2 + H2"),
            ("direct", "CH4 + 2 H2O -> CO2 + 4 H2"),
        ],
    ),
    (
        "methanation set",
        ["CO", "H2", "CH4", "H2O", "CO2", "C"],
        [
            ("meth", "CO + 3 H2 -> CH4 + H2O"),
            ("wgs", "CO + H2O -> CO2 + H2"),
            ("boud", "2 CO -> C + CO2"),
            ("meth2", "CO2 + 4 H2 -> CH4 + 2 H2O"),
        ],
    ),
    (
        "half coefficients",
        ["H2", "O2", "H2O", "H2O2", "N2"],
        [
            ("water", "H2 + 1/2 O2 -> H2O"),
            ("perox", "H2 + O2 -> H2O2"),
            ("decomp", "H2O2 -> H2O + 1/2 O2"),
            ("twice", "2 H2 + O2 -> 2 H2O"),
        ],
    ),
]


def main():
    out = [analyse(*net) for net in TEXTBOOK]
    text = sys.stdin.read()
    species = re.findall(r"^  (\S+): \{formula", text, flags=re.M)
    reactions = re.findall(r"\{id: (\S+), stoich: ([^,]+), rate", text)
    out.append(analyse("generated 50 species, 150 reactions, seed 1", species, reactions))
    json.dump({"networks": out}, sys.stdout, indent=1)
    sys.stdout.write("\n")


main()
