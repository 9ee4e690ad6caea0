"""Starting points for new scenario files: commented texts built on published laws.

Each :class:`Template` names a complete scenario text that passes ``sitegen check``
with no warnings. The texts themselves are package data, one file per template in
``sitegen/scenario/template_files/NAME.toml`` (UTF-8, ``\\n`` line ends), so a user
can read them without running anything; this module holds only the registry
(name, one-line description, published law, equation, file name) and reads a text
with :mod:`importlib.resources` the first time it is asked for.

Every key in a text carries a ``#`` comment, the top of the file says that its
numbers are illustrative placeholders and repeats the registry's law and equation,
``sources`` says ``"illustrative values"`` and ``notes`` names the law the rate
implements.

Conventions used in every text: time is in the model's ``time_unit`` (years unless
the law's own clock is hours, days or seconds); stocks are in the state's unit; a
lever is the one parameter a manager sets. ``sitegen new FILE --template NAME``
writes a text unchanged; ``sitegen new --list`` prints the registry.

No SymPy here, and no file is opened until a text is needed, so listing the
templates is fast.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from importlib import resources

FILES_PACKAGE = "sitegen.scenario"
"""The package whose data folder holds the texts."""
FILES_FOLDER = "template_files"
"""The folder, inside :data:`FILES_PACKAGE`, of the ``NAME.toml`` texts."""


@cache
def read_template_file(file: str) -> str:
    """The text of ``template_files/<file>`` (decoded as UTF-8, line ends kept).

    Read once per process through :mod:`importlib.resources`, so it works from
    an installed wheel as well as from a source checkout. Raises
    :class:`FileNotFoundError` when the package ships no such file.
    """
    resource = resources.files(FILES_PACKAGE).joinpath(FILES_FOLDER, file)
    return resource.read_bytes().decode("utf-8")


@dataclass(frozen=True)
class Template:
    """One registry entry.

    ``name`` is the kebab-case name given to ``--template``; ``description`` is the
    one line shown by ``sitegen new --list``; ``law`` names the published growth or
    balance law (the text's ``notes`` name it too); ``equation`` is the rate written
    out, in the text's own symbols; ``file`` is the name of the text's file in
    ``sitegen/scenario/template_files/`` (``NAME.toml``).
    """

    name: str
    description: str
    law: str
    equation: str
    file: str

    @property
    def text(self) -> str:
        """The scenario file itself (UTF-8, ends with a newline), read on first use."""
        return read_template_file(self.file)


def _template(name: str, description: str, law: str, equation: str) -> Template:
    return Template(name, description, law, equation, f"{name}.toml")


_ALL: tuple[Template, ...] = (
    _template(
        "exponential-growth",
        "unchecked growth with a constant cull: dN/dt = r N - H",
        "Malthus (1798) exponential growth",
        "dN/dt = r N - H",
    ),
    _template(
        "exponential-decay",
        "first-order breakdown with a treatment lever: dC/dt = -(k + a) C",
        "first-order decay (exponential decay law)",
        "dC/dt = -(k + a) C",
    ),
    _template(
        "logistic-quota",
        "logistic stock under a fixed catch limit: dB/dt = r B (1 - B/K) - H",
        "Schaefer (1954) surplus production",
        "dB/dt = r B (1 - B/K) - H",
    ),
    _template(
        "logistic-effort",
        "logistic stock under fixed effort: dB/dt = r B (1 - B/K) - q E B",
        "Schaefer (1954) surplus production with catch proportional to effort",
        "dB/dt = r B (1 - B/K) - q E B",
    ),
    _template(
        "gompertz-quota",
        "Gompertz stock under a fixed catch limit: dB/dt = r B log(K/B) - H",
        "Fox (1970) surplus production",
        "dB/dt = r B log(K/B) - H",
    ),
    _template(
        "pella-tomlinson-quota",
        "generalised production under a catch limit: (r/p) B (1 - (B/K)^p) - H",
        "Pella and Tomlinson (1969) generalised production",
        "dB/dt = (r/p) B (1 - (B/K)^p) - H",
    ),
    _template(
        "allee-quota",
        "hunted herd with a strong Allee effect: dN/dt = r N (N/A - 1)(1 - N/K) - H",
        "strong Allee effect (Allee 1931)",
        "dN/dt = r N (N/A - 1)(1 - N/K) - H",
    ),
    _template(
        "logistic-predation",
        "insect held down by saturating predation: r N (1 - N/K) - Bmax N^2/(A^2 + N^2)",
        "Ludwig, Jones and Holling (1978) spruce budworm model",
        "dN/dt = r N (1 - N/K) - Bmax N^2/(A^2 + N^2)",
    ),
    _template(
        "nutrient-recycling",
        "lake phosphorus with sediment recycling, loading as lever: L - s P + recycling",
        "Carpenter, Ludwig and Brock (1999) lake phosphorus model",
        "dP/dt = L - s P + rmax (P/m)^q / (1 + (P/m)^q)",
    ),
    _template(
        "aquifer-pumping",
        "aquifer water balance under pumping: dh/dt = (R - Q)/Sy - k (h - h0)",
        "single-compartment water balance (conservation of mass)",
        "dh/dt = (R - Q)/Sy - k (h - h0)",
    ),
    _template(
        "mixed-tank",
        "well-mixed tank of constant volume: dx/dt = Q c_in - Q x / V",
        "mass balance of a continuously stirred tank",
        "dx/dt = Q c_in - Q x / V",
    ),
    _template(
        "newton-cooling",
        "temperature relaxing to its surroundings, in °C and hours: dT/dt = -k (T - A)",
        "Newton's law of cooling",
        "dT/dt = -k (T - A)",
    ),
    _template(
        "drag-fall",
        "falling load with power-law drag: dv/dt = g - (c/m)(v/v1)^p",
        "Newton's second law with power-law drag",
        "dv/dt = g - (c/m) (v/v1)^p",
    ),
    _template(
        "sigmoid-switch",
        "population with switch-like (Hill) recruitment and two stable states",
        "recruitment by a Hill (1910) function",
        "dN/dt = I + R (N/h)^n / (1 + (N/h)^n) - d N - H",
    ),
)

TEMPLATES: dict[str, Template] = {template.name: template for template in _ALL}
"""Template name -> :class:`Template`, in the order ``sitegen new --list`` shows them."""


def template_names() -> list[str]:
    """The registered names, in listing order."""
    return list(TEMPLATES)


def get_template(name: str) -> Template:
    """The template called ``name``; raises :class:`KeyError` when there is none."""
    return TEMPLATES[name]
