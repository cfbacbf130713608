"""Aqueous speciation through PHREEQC: the only module that talks to PHREEQC.

Compositions are dictionaries of PHREEQC master species (minteq.v4 names such as ``Na``,
``Edta``, ``Citrate``, ``P``) to mol per litre of solution; protons are not given: each
solution's pH follows from electroneutrality (``pH 7 charge``), which is right for
compounds dissolved as their neutral salts and acids.

Two databases are used:

* ``minteq.v4.dat`` (default).  As shipped it declares its protonated and complexed
  EDTA, citrate and acetate species with ``-gamma 0 0``, which PHREEQC evaluates with the
  Debye-Hückel limiting law.  Before any calculation this module re-declares those
  species with the same log K and delta H but without ``-gamma`` (activity by the Davies
  equation).  It also defines oxalate, which minteq.v4 lacks, with the protonation
  constants of sit.dat (Hummel et al. 2005, NEA-TDB).
* ``sit.dat`` (specific ion interaction theory), the cross-check above the ionic strength
  where the Davies equation is reliable (about 0.5 mol/kg).

Concentrations per litre are converted to molality by PHREEQC with a solution density
of 1 g/mL (computing the density instead changes the pH by under 0.005 here and makes
each call three times slower).

One :class:`Phreeqc` instance is kept per database (loading is the slow part) and several
solutions go into one ``RunString`` call.

Examples
--------
>>> r = solve([{"Citrate": 0.1}])[0]
>>> round(r.ph, 1)
2.1
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources

from trialkit.exceptions import ChemistryError

DEFAULT_DATABASE = "minteq.v4.dat"
CROSS_CHECK_DATABASE = "sit.dat"
DATABASES = (DEFAULT_DATABASE, CROSS_CHECK_DATABASE)
#: Ionic strength (mol/kg) above which the Davies equation is not to be trusted.
DAVIES_LIMIT = 0.5

#: minteq.v4 master species -> name in each database.
_NAMES = {
    DEFAULT_DATABASE: {},
    CROSS_CHECK_DATABASE: {"Citrate": "Cit", "Oxalate": "Ox"},
}
#: Ligands whose minteq.v4 species are re-declared with Davies activity.
REDECLARED_LIGANDS = ("Citrate-3", "Edta-4", "Acetate-")

_OXALATE_MINTEQ = """SOLUTION_MASTER_SPECIES
Oxalate Oxalate-2 0 88.019 88.019
SOLUTION_SPECIES
Oxalate-2 = Oxalate-2
    log_k 0
H+ + Oxalate-2 = H(Oxalate)-
    log_k 4.25
    delta_h 7.3 kJ
2 H+ + Oxalate-2 = H2(Oxalate)
    log_k 5.65
    delta_h 10.6 kJ
"""


@dataclass(frozen=True)
class SolutionResult:
    """PHREEQC's answer for one solution.

    Attributes
    ----------
    ph : float
        pH (activity scale of the database's model).
    ionic_strength : float
        Ionic strength, mol/kg water.
    database : str
        Database file name.
    log_gamma : dict
        log10 activity coefficient of each species asked for.
    """

    ph: float
    ionic_strength: float
    database: str
    log_gamma: dict[str, float] = field(default_factory=dict)


class _Engine:
    """One loaded PHREEQC instance and its call count."""

    def __init__(self, database: str):
        import phreeqc

        if database not in phreeqc.Phreeqc.ListBuiltInDatabases():
            raise ChemistryError(f"PHREEQC database {database!r} is not built in; use one "
                                 f"of {', '.join(DATABASES)}")
        self.database = database
        self.calls = 0
        self.p = phreeqc.Phreeqc()
        self.p.LoadBuiltInDatabase(database)
        if database == DEFAULT_DATABASE:
            self._run(redeclaration_block() + _OXALATE_MINTEQ + "END\n", "database set-up")

    def _run(self, text: str, what: str) -> None:
        self.calls += 1
        n_errors = self.p.RunString(text)
        if n_errors:
            message = " ".join(self.p.GetErrorString().split())[:600]
            raise ChemistryError(
                f"PHREEQC ({self.database}) could not solve {what}: {message}. Check the "
                "amounts (a solution far beyond solubility or with no water can fail)."
            )


_ENGINES: dict[str, _Engine] = {}


def engine(database: str = DEFAULT_DATABASE) -> _Engine:
    """The PHREEQC engine of ``database``, loaded on first use and kept."""
    if database not in _ENGINES:
        _ENGINES[database] = _Engine(database)
    return _ENGINES[database]


def call_count() -> int:
    """Total ``RunString`` calls made so far by every loaded engine (for benchmarks)."""
    return sum(e.calls for e in _ENGINES.values())


@lru_cache(maxsize=1)
def redeclaration_block() -> str:
    """SOLUTION_SPECIES block re-declaring minteq.v4's ligand species without ``-gamma``.

    Built from the database text shipped with the ``phreeqc`` package: every reaction
    whose left side holds one of :data:`REDECLARED_LIGANDS` is copied with its ``log_k``,
    ``delta_h`` and ``-analytic`` lines and without its ``-gamma`` line.
    """
    text = _database_text(DEFAULT_DATABASE)
    first = text.index("SOLUTION_SPECIES")
    start = text.index("SOLUTION_SPECIES", first + 1)
    stop = text.index("PHASES", start)
    ligand = re.compile(r"(?<![A-Za-z(])(" + "|".join(re.escape(s) for s in REDECLARED_LIGANDS)
                        + r")(?![A-Za-z0-9])")
    blocks: list[list[str]] = []
    for line in text[start + len("SOLUTION_SPECIES"):stop].splitlines():
        stripped = line.strip()
        if line and not line[0].isspace() and "=" in line and not stripped.startswith("#"):
            blocks.append([stripped])
        elif blocks and stripped and not stripped.startswith("#"):
            blocks[-1].append("    " + stripped)
    out = ["SOLUTION_SPECIES"]
    for block in blocks:
        left, right = (s.strip() for s in block[0].split("=", 1))
        if left == right or not ligand.search(left):
            continue
        out.append(block[0])
        out.extend(line for line in block[1:] if not line.strip().startswith("-gamma"))
    return "\n".join(out) + "\n"


def redeclared_species() -> list[str]:
    """Names of the species re-declared by :func:`redeclaration_block`."""
    names = []
    for line in redeclaration_block().splitlines()[1:]:
        if "=" in line and not line.startswith(" "):
            names.append(line.split("=", 1)[1].strip())
    return names


def _database_text(database: str) -> str:
    return resources.files("phreeqc").joinpath("databases", database).read_text("latin-1")


def solution_block(number: int, composition: dict[str, float], temperature_c: float,
                   database: str = DEFAULT_DATABASE) -> str:
    """PHREEQC ``SOLUTION`` input for one composition (mol/L of minteq.v4 master species)."""
    names = _NAMES[database]
    lines = [f"SOLUTION {number}", f"    temp {temperature_c:.6g}", "    units mol/l",
             "    density 1", "    pH 7 charge"]
    from trialkit.chemistry.catalogue import SPECIES

    for species, mol_l in sorted(composition.items()):
        if species not in SPECIES:
            raise ChemistryError(f"unknown master species {species!r}; allowed: "
                                 + ", ".join(SPECIES))
        if mol_l < 0 or not math.isfinite(mol_l):
            raise ChemistryError(f"negative or non-finite amount of {species}: {mol_l}")
        if mol_l > 0:
            lines.append(f"    {names.get(species, species)} {mol_l:.10g}")
    return "\n".join(lines) + "\n"


def solve(compositions: list[dict[str, float]], temperature_c: float | list[float] = 25.0,
          *, database: str = DEFAULT_DATABASE, gamma_species: tuple[str, ...] = (),
          label: str = "the bath") -> list[SolutionResult]:
    """pH and ionic strength of several solutions in one PHREEQC call.

    Parameters
    ----------
    compositions : list of dict
        Master species (minteq.v4 names) -> mol/L.
    temperature_c : float or list of float
        Temperature of each solution, °C.
    database : str
        ``"minteq.v4.dat"`` (with the Davies re-declaration) or ``"sit.dat"``.
    gamma_species : tuple of str
        Species (database names) whose log10 activity coefficient to report.
    label : str
        Names the bath in error messages.

    Returns
    -------
    list of SolutionResult
    """
    if not compositions:
        return []
    temps = (list(temperature_c) if isinstance(temperature_c, (list, tuple))
             else [float(temperature_c)] * len(compositions))
    eng = engine(database)
    head = ["SELECTED_OUTPUT 1", "    -reset false", "    -solution true", "    -pH true",
            "    -ionic_strength true", "    -high_precision true"]
    if gamma_species:
        head.append("    -activities " + " ".join(gamma_species))
        head.append("    -molalities " + " ".join(gamma_species))
    parts = ["\n".join(head) + "\n"]
    for i, (comp, t) in enumerate(zip(compositions, temps, strict=True), start=1):
        parts.append(solution_block(i, comp, t, database))
    parts.append("END\n")
    eng._run("".join(parts), label)
    out = eng.p.GetSelectedOutput()
    n = len(compositions)
    if len(out.get("pH", [])) != n:
        raise ChemistryError(f"PHREEQC ({database}) returned {len(out.get('pH', []))} "
                             f"results for {n} solutions of {label}")
    results = []
    for i in range(n):
        gammas = {}
        for sp in gamma_species:
            la = out[f"la_{sp}"][i]
            m = out[f"m_{sp}(mol/kgw)"][i]
            gammas[sp] = la - math.log10(m) if m > 0 else float("nan")
        ph = float(out["pH"][i])
        mu = float(out["mu"][i])
        if not (math.isfinite(ph) and math.isfinite(mu)):
            raise ChemistryError(f"PHREEQC ({database}) gave no pH for {label}")
        results.append(SolutionResult(ph, mu, database, gammas))
    return results


def davies_log_gamma(charge: int, ionic_strength: float, temperature_c: float = 25.0) -> float:
    """Davies equation, log10 γ = -A z² (√I/(1+√I) - 0.3 I), with A at 25 °C = 0.5085.

    A is PHREEQC's own Debye-Hückel A at 25 °C (its output reports ``A(0) = 0.5085``
    -- from memory); used only to check what PHREEQC does.
    """
    del temperature_c
    a = 0.5085
    s = math.sqrt(ionic_strength)
    return -a * charge**2 * (s / (1 + s) - 0.3 * ionic_strength)


def limiting_law_log_gamma(charge: int, ionic_strength: float) -> float:
    """Debye-Hückel limiting law, log10 γ = -A z² √I (A = 0.5085)."""
    return -0.5085 * charge**2 * math.sqrt(ionic_strength)
