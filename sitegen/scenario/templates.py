"""Starting points for new scenario files: commented texts built on published laws.

Each :class:`Template` holds a complete scenario text that passes ``sitegen check``
with no warnings. Every key in it carries a ``#`` comment, the top of the file says
that its numbers are illustrative placeholders, ``sources`` says
``"illustrative values"`` and ``notes`` names the law the rate implements.

Conventions used in every text: time is in the model's ``time_unit`` (years unless
the law's own clock is hours, days or seconds); stocks are in the state's unit; a
lever is the one parameter a manager sets. ``sitegen new FILE --template NAME``
writes a text unchanged; ``sitegen new --list`` prints the registry.

This module holds data only (no SymPy, no file access) so listing templates is fast.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Template:
    """One registry entry.

    ``name`` is the kebab-case name given to ``--template``; ``description`` is the
    one line shown by ``sitegen new --list``; ``law`` names the published growth or
    balance law (the text's ``notes`` name it too); ``equation`` is the rate written
    out, in the text's own symbols; ``text`` is the scenario file itself (UTF-8, ends
    with a newline).
    """

    name: str
    description: str
    law: str
    equation: str
    text: str


# Shared wording for the generic keys, so every template explains them the same way.
_TOP = """\
# Scenario template "{name}", written by `sitegen new`.
# ILLUSTRATIVE NUMBERS: every value below is an invented placeholder, not data.
# Replace each one with your own estimates (and say where they came from in
# `sources`) before using the results for anything.
#
# Law: {law}, {equation}.
# Check the file after editing with:  sitegen check FILE
"""


def _top(name: str, law: str, equation: str) -> str:
    return _TOP.format(name=name, law=law, equation=equation)


_EXPONENTIAL_GROWTH = """
[scenario]  # what the scenario is about; shown on every page
title = "Invasive browser on a small island under culling"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
A browsing mammal released on an island grows without crowding; how many must be culled
each year to stop it?'''
assessment_year = 2026  # the year the numbers refer to
tags = ["invasive species", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Malthus (1798) exponential growth, dN/dt = r N, minus a constant cull H. The equilibrium
N = H/r is unstable: above it the herd grows, below it the cull wins.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "N"  # its name in the formulas
name = "animals on the island"  # what it is, in words
unit = "animal"  # counted in animals
min = 0  # lower end of the region analysed
max = 3000  # upper end of the region analysed; exponential growth has no ceiling of its own
current = 420  # today's count

[parameters.r]  # r: growth per head per year when food is plentiful
value = 0.3  # per year; births minus natural deaths
unit = "1/yr"  # per year
name = "intrinsic growth rate"  # label shown in the dossier
range = [0.1, 0.5]  # low and high values explored in diagrams and sliders

[parameters.H]  # H: the lever, animals culled per year
value = 100  # animals per year
unit = "animal/yr"  # animals per year, the unit of the rate
name = "annual cull"  # label shown in the dossier
range = [0, 300]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "r*N - H"  # growth minus the cull; every term is animal/yr
lever = "H"  # the parameter the manager sets
yield = "H"  # what is removed per unit time
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "current cull"  # policy name
values = { H = 100 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "doubled cull"  # policy name
values = { H = 200 }  # the cull is doubled
"""

_EXPONENTIAL_DECAY = """
[scenario]  # what the scenario is about; shown on every page
title = "Contaminant in soil under natural breakdown"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
A contaminant in topsoil breaks down at a constant fractional rate; how long until it
falls below the guideline value?'''
assessment_year = 2026  # the year the numbers refer to
tags = ["contaminated land", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
First-order decay (exponential decay law), dC/dt = -k C: a fixed share of what is left
breaks down each year, so the half-life is log(2)/k.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "C"  # its name in the formulas
name = "contaminant concentration in topsoil"  # what it is, in words
unit = "mg/kg"  # milligrams per kilogram of dry soil
min = 0  # lower end of the region analysed
max = 3000  # upper end of the region analysed
current = 1800  # today's measured concentration

[parameters.k]  # k: share of the contaminant broken down per year
value = 0.2  # per year; a half-life of about 3.5 years
unit = "1/yr"  # per year
name = "first-order decay rate"  # label shown in the dossier
range = [0.05, 0.6]  # explored in diagrams and sliders

[parameters.a]  # a: the lever, extra breakdown from treatment (aeration, nutrients)
value = 0  # per year; no treatment today
unit = "1/yr"  # per year
name = "extra decay rate from treatment"  # label shown in the dossier
range = [0, 0.5]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "-(k + a)*C"  # natural and treated breakdown, both first order
lever = "a"  # the parameter the manager sets (choice of treatment)
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "natural attenuation"  # policy name
values = { a = 0 }  # no treatment

[[policies]]  # a second alternative
name = "treated"  # policy name
values = { a = 0.3 }  # treatment triples the breakdown rate
"""

_LOGISTIC_QUOTA = """
[scenario]  # what the scenario is about; shown on every page
title = "Fish stock under an annual catch limit"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
A fish stock with logistic growth is fished under a fixed annual catch limit; how large
may the limit be?'''
assessment_year = 2026  # the year the numbers refer to
tags = ["fisheries", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Schaefer (1954) surplus production: logistic growth (Verhulst 1838) minus a constant
catch H. Above the maximum surplus r K / 4 no stock survives.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "B"  # its name in the formulas
name = "stock biomass"  # what it is, in words
unit = "t"  # tonnes
min = 0  # lower end of the region analysed
max = 12000  # upper end of the region analysed
current = 6500  # today's estimate

[parameters.r]  # r: growth per tonne per year when the stock is small
value = 0.4  # per year
unit = "1/yr"  # per year
name = "intrinsic growth rate"  # label shown in the dossier
range = [0.2, 0.6]  # explored in diagrams and sliders

[parameters.K]  # K: the biomass the habitat supports without fishing
value = 10000  # tonnes
unit = "t"  # the unit of the state
name = "carrying capacity"  # label shown in the dossier
range = [7000, 13000]  # explored in diagrams and sliders

[parameters.H]  # H: the lever, the catch limit
value = 700  # tonnes per year
unit = "t/yr"  # the unit of the rate
name = "annual catch limit"  # label shown in the dossier
range = [0, 1400]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "r*B*(1 - B/K) - H"  # surplus production minus the catch
lever = "H"  # the parameter the manager sets
yield = "H"  # the catch taken per year
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "current limit"  # policy name
values = { H = 700 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "cautious limit"  # policy name
values = { H = 500 }  # a lower catch limit
"""

_LOGISTIC_EFFORT = """
[scenario]  # what the scenario is about; shown on every page
title = "Fish stock under a fixed fishing effort"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
A fish stock with logistic growth is fished with a fixed number of vessel-days a year,
so the catch follows the stock.'''
assessment_year = 2026  # the year the numbers refer to
tags = ["fisheries", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Schaefer (1954) surplus production with catch proportional to effort and biomass, q E B;
with price and cost this is the Gordon (1954) bioeconomic model.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "B"  # its name in the formulas
name = "stock biomass"  # what it is, in words
unit = "t"  # tonnes
min = 0  # lower end of the region analysed
max = 12000  # upper end of the region analysed
current = 6000  # today's estimate

[parameters.r]  # r: growth per tonne per year when the stock is small
value = 0.4  # per year
unit = "1/yr"  # per year
name = "intrinsic growth rate"  # label shown in the dossier
range = [0.2, 0.6]  # explored in diagrams and sliders

[parameters.K]  # K: the biomass the habitat supports without fishing
value = 10000  # tonnes
unit = "t"  # the unit of the state
name = "carrying capacity"  # label shown in the dossier
range = [7000, 13000]  # explored in diagrams and sliders

[parameters.q]  # q: share of the stock caught by one vessel-day
value = 0.0005  # per vessel-day
unit = "1/vessel-day"  # so that q*E is per year
name = "catchability"  # label shown in the dossier
range = [0.0003, 0.0008]  # explored in diagrams and sliders

[parameters.E]  # E: the lever, fishing effort
value = 300  # vessel-days per year
unit = "vessel-day/yr"  # vessel-days per year
name = "fishing effort"  # label shown in the dossier
range = [0, 800]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "r*B*(1 - B/K) - q*E*B"  # surplus production minus the catch
lever = "E"  # the parameter the manager sets
yield = "q*E*B"  # the catch taken per year
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "current effort"  # policy name
values = { E = 300 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "reduced effort"  # policy name
values = { E = 200 }  # a third fewer vessel-days

[economics]  # money: revenue from the yield, cost of the lever
price = 1500  # money per tonne landed
cost = 900  # money per vessel-day (per unit of lever per year, times a year)
currency = "EUR"  # word shown with money figures
"""

_GOMPERTZ_QUOTA = """
[scenario]  # what the scenario is about; shown on every page
title = "Shellfish stock with Gompertz growth under a catch limit"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
A stock whose growth peaks at a lower biomass than the logistic law, fished under a
fixed catch limit.'''
assessment_year = 2026  # the year the numbers refer to
tags = ["fisheries", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Fox (1970) surplus production: Gompertz (1825) growth r B log(K/B) minus a constant
catch H. The surplus peaks at B = K/e with maximum r K / e.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "B"  # its name in the formulas
name = "stock biomass"  # what it is, in words
unit = "t"  # tonnes
min = 0  # lower end of the region analysed
max = 6000  # upper end of the region analysed
current = 3000  # today's estimate

[parameters.r]  # r: the Gompertz growth coefficient
value = 0.5  # per year
unit = "1/yr"  # per year
name = "growth coefficient"  # label shown in the dossier
range = [0.3, 0.8]  # explored in diagrams and sliders

[parameters.K]  # K: the biomass the habitat supports without fishing
value = 5000  # tonnes
unit = "t"  # the unit of the state
name = "carrying capacity"  # label shown in the dossier
range = [3500, 6500]  # explored in diagrams and sliders

[parameters.H]  # H: the lever, the catch limit
value = 600  # tonnes per year
unit = "t/yr"  # the unit of the rate
name = "annual catch limit"  # label shown in the dossier
range = [0, 1200]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "r*B*log(K/B) - H"  # Gompertz surplus minus the catch; log is natural, K/B has no unit
lever = "H"  # the parameter the manager sets
yield = "H"  # the catch taken per year
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "current limit"  # policy name
values = { H = 600 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "cautious limit"  # policy name
values = { H = 400 }  # a lower catch limit
"""

_PELLA_TOMLINSON_QUOTA = """
[scenario]  # what the scenario is about; shown on every page
title = "Fish stock with a shape parameter under a catch limit"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
A stock whose surplus production may peak below or above half the carrying capacity,
fished under a fixed catch limit.'''
assessment_year = 2026  # the year the numbers refer to
tags = ["fisheries", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Pella and Tomlinson (1969) generalised production, (r/p) B (1 - (B/K)^p), minus a
constant catch H. p = 1 gives the logistic law; p near 0 approaches the Gompertz (Fox)
law.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "B"  # its name in the formulas
name = "stock biomass"  # what it is, in words
unit = "t"  # tonnes
min = 0  # lower end of the region analysed
max = 60000  # upper end of the region analysed
current = 30000  # today's estimate

[parameters.r]  # r: growth per tonne per year when the stock is small (scaled by 1/p)
value = 0.3  # per year
unit = "1/yr"  # per year
name = "intrinsic growth rate"  # label shown in the dossier
range = [0.15, 0.5]  # explored in diagrams and sliders

[parameters.K]  # K: the biomass the habitat supports without fishing
value = 50000  # tonnes
unit = "t"  # the unit of the state
name = "carrying capacity"  # label shown in the dossier
range = [35000, 65000]  # explored in diagrams and sliders

[parameters.p]  # p: shape; the surplus peaks at B = K (1 + p)^(-1/p)
value = 0.5  # no unit; the peak lies at 0.44 K
unit = "1"  # dimensionless
name = "shape parameter"  # label shown in the dossier
range = [0.1, 2]  # explored in diagrams and sliders

[parameters.H]  # H: the lever, the catch limit
value = 3000  # tonnes per year
unit = "t/yr"  # the unit of the rate
name = "annual catch limit"  # label shown in the dossier
range = [0, 7000]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "(r/p)*B*(1 - (B/K)^p) - H"  # B/K has no unit, so it may be raised to the power p
lever = "H"  # the parameter the manager sets
yield = "H"  # the catch taken per year
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "current limit"  # policy name
values = { H = 3000 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "cautious limit"  # policy name
values = { H = 2000 }  # a lower catch limit
"""

_ALLEE_QUOTA = """
[scenario]  # what the scenario is about; shown on every page
title = "Hunted herd with a strong Allee effect"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
A herd that declines when it is too sparse (mates are hard to find) is hunted under a
fixed number of tags a year.'''
assessment_year = 2026  # the year the numbers refer to
tags = ["wildlife", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Strong Allee effect (Allee 1931) in the cubic form r N (N/A - 1)(1 - N/K), minus a
constant hunt H. Below the threshold A the herd dies out even without hunting; hunting
raises that threshold.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "N"  # its name in the formulas
name = "herd size"  # what it is, in words
unit = "animal"  # counted in animals
min = 0  # lower end of the region analysed
max = 3000  # upper end of the region analysed
current = 1800  # today's count

[parameters.r]  # r: scales the growth curve
value = 0.15  # per year
unit = "1/yr"  # per year
name = "growth coefficient"  # label shown in the dossier
range = [0.08, 0.25]  # explored in diagrams and sliders

[parameters.A]  # A: the Allee threshold, below which the herd shrinks
value = 300  # animals
unit = "animal"  # the unit of the state
name = "Allee threshold"  # label shown in the dossier
range = [150, 500]  # explored in diagrams and sliders

[parameters.K]  # K: the herd the range supports without hunting
value = 2400  # animals
unit = "animal"  # the unit of the state
name = "carrying capacity"  # label shown in the dossier
range = [1800, 3000]  # explored in diagrams and sliders

[parameters.H]  # H: the lever, animals taken on hunting tags each year
value = 150  # animals per year
unit = "animal/yr"  # the unit of the rate
name = "hunting tags issued"  # label shown in the dossier
range = [0, 400]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "r*N*(N/A - 1)*(1 - N/K) - H"  # growth with a threshold, minus the hunt
lever = "H"  # the parameter the manager sets
yield = "H"  # animals taken per year
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "current tags"  # policy name
values = { H = 150 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "fewer tags"  # policy name
values = { H = 80 }  # fewer tags issued
"""

_LOGISTIC_PREDATION = """
[scenario]  # what the scenario is about; shown on every page
title = "Forest insect held down by bird predation"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
An insect grows logistically on its host trees and is eaten by birds whose appetite
saturates; low and outbreak states can both persist.'''
assessment_year = 2026  # the year the numbers refer to
tags = ["forestry", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Ludwig, Jones and Holling (1978) spruce budworm model: logistic growth minus a sigmoid
(Holling type III) predation Bmax N^2 / (A^2 + N^2).'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "N"  # its name in the formulas
name = "larval density"  # what it is, in words
unit = "klarva/ha"  # thousand larvae per hectare
min = 0  # lower end of the region analysed
max = 300  # upper end of the region analysed
current = 10  # today's estimate, in the low (endemic) state

[parameters.r]  # r: growth per larva per year on plentiful foliage
value = 1.0  # per year
unit = "1/yr"  # per year
name = "intrinsic growth rate"  # label shown in the dossier
range = [0.5, 1.8]  # wide enough to pass both tipping points

[parameters.K]  # K: the density the foliage supports
value = 250  # thousand larvae per hectare
unit = "klarva/ha"  # the unit of the state
name = "carrying capacity"  # label shown in the dossier
range = [60, 400]  # reaches below about 5.2 A, where bistability ends (the cusp)

[parameters.Bmax]  # Bmax: the most larvae birds can eat per hectare per year
value = 50  # thousand larvae per hectare per year
unit = "klarva/ha/yr"  # the unit of the rate
name = "maximum predation"  # label shown in the dossier
range = [30, 80]  # explored in diagrams and sliders

[parameters.A]  # A: density at which predation is half its maximum
value = 20  # thousand larvae per hectare
unit = "klarva/ha"  # the unit of the state
name = "half-saturation density"  # label shown in the dossier
range = [10, 35]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "r*N*(1 - N/K) - Bmax*N^2/(A^2 + N^2)"  # growth minus saturating predation
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "as today"  # policy name
values = { K = 250 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "thinned stands"  # policy name
values = { K = 150 }  # thinning leaves less foliage per hectare
"""

_NUTRIENT_RECYCLING = """
[scenario]  # what the scenario is about; shown on every page
title = "Shallow lake under phosphorus loading"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
Phosphorus flows into a lake, leaves by outflow and burial, and is released again from
the sediment once the water turns turbid.'''
assessment_year = 2026  # the year the numbers refer to
tags = ["water quality", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Carpenter, Ludwig and Brock (1999) lake phosphorus model: loading L minus loss s P plus
recycling rmax P^q / (m^q + P^q), written with (P/m)^q so that the power has no unit.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "P"  # its name in the formulas
name = "phosphorus in the water"  # what it is, in words
unit = "g/m^2"  # grams per square metre of lake surface
min = 0  # lower end of the region analysed
max = 3  # upper end of the region analysed
current = 0.45  # today's estimate, in the clear-water state

[parameters.L]  # L: the lever, phosphorus loading from the catchment
value = 0.3  # grams per square metre per year
unit = "g/m^2/yr"  # the unit of the rate
name = "phosphorus loading"  # label shown in the dossier
range = [0, 0.8]  # explored in diagrams and sliders

[parameters.s]  # s: share of the phosphorus lost to outflow and burial per year
value = 0.65  # per year
unit = "1/yr"  # per year
name = "loss rate"  # label shown in the dossier
range = [0.5, 0.8]  # explored in diagrams and sliders

[parameters.rmax]  # rmax: the most phosphorus the sediment can release per year
value = 1.0  # grams per square metre per year
unit = "g/m^2/yr"  # the unit of the rate
name = "maximum recycling"  # label shown in the dossier
range = [0.7, 1.3]  # explored in diagrams and sliders

[parameters.m]  # m: phosphorus level at which recycling is half its maximum
value = 1.2  # grams per square metre
unit = "g/m^2"  # the unit of the state
name = "half-recycling level"  # label shown in the dossier
range = [0.9, 1.5]  # explored in diagrams and sliders

[parameters.q]  # q: steepness of the recycling switch
value = 8  # no unit
unit = "1"  # dimensionless
name = "recycling steepness"  # label shown in the dossier
range = [2, 12]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "L - s*P + rmax*(P/m)^q/(1 + (P/m)^q)"  # inflow minus loss plus recycling
lever = "L"  # the parameter the manager sets
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "current loading"  # policy name
values = { L = 0.3 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "catchment measures"  # policy name
values = { L = 0.15 }  # loading halved by buffer strips and treatment
"""

_AQUIFER_PUMPING = """
[scenario]  # what the scenario is about; shown on every page
title = "Aquifer under pumping"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
An unconfined aquifer is recharged by rain, pumped by wells and drains to a river; at
what pumping rate does the water table fall below the well screens?'''
assessment_year = 2026  # the year the numbers refer to
tags = ["groundwater", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Single-compartment water balance (conservation of mass) with a linear-reservoir outflow:
(recharge - pumping) / specific yield - k (h - h0).'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "h"  # its name in the formulas
name = "water-table elevation"  # what it is, in words
unit = "m"  # metres above the survey datum
min = 30  # lower end of the region analysed (the aquifer base)
max = 60  # upper end of the region analysed (the ground surface)
current = 48  # today's mean level in the observation wells
collapse_level = 40  # below this the well screens run dry

[parameters.R]  # R: rain water reaching the water table, as depth over the aquifer
value = 0.15  # metres per year
unit = "m/yr"  # depth of water per year
name = "recharge"  # label shown in the dossier
range = [0.08, 0.25]  # explored in diagrams and sliders

[parameters.Q]  # Q: the lever, water pumped out, as depth over the aquifer
value = 0.1  # metres per year
unit = "m/yr"  # depth of water per year
name = "pumping"  # label shown in the dossier
range = [0, 0.2]  # explored in diagrams and sliders

[parameters.Sy]  # Sy: water released per metre of fall in the water table
value = 0.15  # no unit (a volume fraction)
unit = "1"  # dimensionless
name = "specific yield"  # label shown in the dossier
range = [0.08, 0.25]  # explored in diagrams and sliders

[parameters.k]  # k: how fast the aquifer drains to the river, per metre of head above it
value = 0.05  # per year
unit = "1/yr"  # per year
name = "drainage coefficient"  # label shown in the dossier
range = [0.02, 0.1]  # explored in diagrams and sliders

[parameters.h0]  # h0: the river level the aquifer drains towards
value = 42  # metres above the datum
unit = "m"  # the unit of the state
name = "river stage"  # label shown in the dossier

[model]  # the law: d(state)/dt = rate
rate = "(R - Q)/Sy - k*(h - h0)"  # net inflow raises the table; drainage lowers it
lever = "Q"  # the parameter the manager sets
yield = "Q"  # water taken per year
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "current pumping"  # policy name
values = { Q = 0.1 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "pumping cap"  # policy name
values = { Q = 0.07 }  # licences capped at 70 mm a year
"""

_MIXED_TANK = """
[scenario]  # what the scenario is about; shown on every page
title = "Well-mixed tank receiving a dissolved substance"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
Water carrying a dissolved substance flows through a tank of constant volume; how much
of it does the tank hold in the long run?'''
assessment_year = 2026  # the year the numbers refer to
tags = ["water quality", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Mass balance of a continuously stirred tank (CSTR): inflow Q c_in minus outflow Q x / V,
with inflow equal to outflow so the volume stays constant.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "x"  # its name in the formulas
name = "mass of the substance in the tank"  # what it is, in words
unit = "kg"  # kilograms
min = 0  # lower end of the region analysed
max = 100  # upper end of the region analysed
current = 20  # today's estimate

[parameters.Q]  # Q: flow through the tank (in = out)
value = 50  # cubic metres per day
unit = "m^3/day"  # cubic metres per day
name = "flow"  # label shown in the dossier
range = [20, 100]  # explored in diagrams and sliders

[parameters.c_in]  # c_in: the lever, concentration of the inflow
value = 0.2  # kilograms per cubic metre
unit = "kg/m^3"  # kilograms per cubic metre
name = "inflow concentration"  # label shown in the dossier
range = [0, 0.5]  # explored in diagrams and sliders

[parameters.V]  # V: the tank's constant volume
value = 200  # cubic metres
unit = "m^3"  # cubic metres
name = "volume"  # label shown in the dossier

[model]  # the law: d(state)/dt = rate
rate = "Q*c_in - Q*x/V"  # mass in minus mass out; x/V is the tank's concentration
lever = "c_in"  # the parameter the manager sets
time_unit = "day"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "current inflow"  # policy name
values = { c_in = 0.2 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "pre-treated inflow"  # policy name
values = { c_in = 0.05 }  # inflow treated upstream
"""

_NEWTON_COOLING = """
[scenario]  # what the scenario is about; shown on every page
title = "Cooled room warming after a power failure"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
A cooled room loses its power and warms towards the outside temperature; how long does
it stay within its limit?'''
assessment_year = 2026  # the year the numbers refer to
tags = ["cold chain", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Newton's law of cooling: dT/dt = -k (T - A), so the gap to the outside temperature A
shrinks by a fixed share each hour. Storage rules for food or medicines apply and take
precedence.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "T"  # its name in the formulas
name = "air temperature in the room"  # what it is, in words
unit = "°C"  # degrees Celsius
min = -5  # lower end of the region analysed
max = 40  # upper end of the region analysed
current = 4  # the temperature when the power failed

[parameters.k]  # k: share of the gap to the outside closed per hour
value = 0.03  # per hour
unit = "1/h"  # per hour
name = "heat-exchange coefficient"  # label shown in the dossier
range = [0.01, 0.08]  # explored in diagrams and sliders

[parameters.A]  # A: the temperature outside the room
value = 28  # degrees Celsius
unit = "°C"  # the unit of the state
name = "outside temperature"  # label shown in the dossier
range = [15, 40]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "-k*(T - A)"  # warming in proportion to the gap
time_unit = "h"  # hours

[[policies]]  # an alternative to compare with the base model
name = "doors kept shut"  # policy name
values = { k = 0.03 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "doors opened for stock checks"  # policy name
values = { k = 0.06 }  # opening the doors doubles the heat exchange
"""

_DRAG_FALL = """
[scenario]  # what the scenario is about; shown on every page
title = "Load falling under a parachute"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
A load falls under a parachute whose drag grows with a power of speed; what speed does
it settle at, and how heavy may it be?'''
assessment_year = 2026  # the year the numbers refer to
tags = ["engineering", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Newton's second law with power-law drag: dv/dt = g - (c/m)(v/v1)^p; p = 1 is linear
(Stokes-like) drag, p = 2 quadratic drag. The reference speed v1 makes v/v1 unitless.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "v"  # its name in the formulas
name = "downward speed"  # what it is, in words
unit = "m/s"  # metres per second
min = 0  # lower end of the region analysed
max = 80  # upper end of the region analysed; holds the linear-drag terminal speed
current = 0  # at release the load has no downward speed

[parameters.g]  # g: acceleration due to gravity
value = 9.81  # metres per second squared
unit = "m/s^2"  # metres per second squared
name = "gravity"  # label shown in the dossier

[parameters.c]  # c: drag force at the reference speed v1
value = 25  # newtons
unit = "kg*m/s^2"  # newtons, written out
name = "drag at reference speed"  # label shown in the dossier
range = [15, 40]  # explored in diagrams and sliders

[parameters.m]  # m: the lever, mass of the load with its parachute
value = 100  # kilograms
unit = "kg"  # kilograms
name = "load mass"  # label shown in the dossier
range = [40, 200]  # explored in diagrams and sliders

[parameters.v1]  # v1: reference speed at which the drag equals c
value = 1  # metre per second
unit = "m/s"  # the unit of the state
name = "reference speed"  # label shown in the dossier

[parameters.p]  # p: how steeply drag grows with speed
value = 2  # no unit
unit = "1"  # dimensionless
name = "drag exponent"  # label shown in the dossier
range = [1, 2]  # from linear to quadratic drag

[model]  # the law: d(state)/dt = rate
rate = "g - (c/m)*(v/v1)^p"  # gravity minus drag per unit mass
lever = "m"  # the parameter the planner sets
time_unit = "s"  # seconds

[[policies]]  # an alternative to compare with the base model
name = "linear drag"  # policy name
values = { p = 1 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "quadratic drag"  # policy name
values = { p = 2 }  # the usual assumption for parachutes
"""

_SIGMOID_SWITCH = """
[scenario]  # what the scenario is about; shown on every page
title = "Colony whose recruitment switches on with size"  # page title
# summary: one paragraph (Markdown) saying what the scenario asks
summary = '''
A colony attracts recruits only once it is large (a switch-like response), so a small
and a large colony can both persist.'''
assessment_year = 2026  # the year the numbers refer to
tags = ["wildlife", "template"]  # words that group scenarios for comparison
# notes: the law this model implements and how to read it (Markdown)
notes = '''
Recruitment by a Hill (1910) function R (N/h)^n / (1 + (N/h)^n) plus immigration I,
minus mortality d N and losses H. With n above 1 the response is sigmoid and two stable
states can coexist.'''
sources = ["illustrative values"]  # where the values came from; replace when you use data

[state]  # the one quantity that changes over time
symbol = "N"  # its name in the formulas
name = "breeding pairs"  # what it is, in words
unit = "pair"  # counted in breeding pairs
min = 0  # lower end of the region analysed
max = 6000  # upper end of the region analysed
current = 3800  # today's count, in the large state

[parameters.I]  # I: pairs arriving from other colonies each year
value = 20  # pairs per year
unit = "pair/yr"  # the unit of the rate
name = "immigration"  # label shown in the dossier
range = [0, 60]  # explored in diagrams and sliders

[parameters.R]  # R: the most recruits a large colony attracts per year
value = 400  # pairs per year
unit = "pair/yr"  # the unit of the rate
name = "maximum recruitment"  # label shown in the dossier
range = [250, 550]  # explored in diagrams and sliders

[parameters.h]  # h: colony size at which recruitment is half its maximum
value = 1500  # pairs
unit = "pair"  # the unit of the state
name = "half-recruitment size"  # label shown in the dossier
range = [1000, 2000]  # explored in diagrams and sliders

[parameters.n]  # n: steepness of the switch (Hill coefficient)
value = 4  # no unit
unit = "1"  # dimensionless
name = "Hill coefficient"  # label shown in the dossier
range = [2, 6]  # explored in diagrams and sliders

[parameters.d]  # d: share of the pairs lost to natural mortality each year
value = 0.1  # per year
unit = "1/yr"  # per year
name = "mortality rate"  # label shown in the dossier
range = [0.06, 0.14]  # explored in diagrams and sliders

[parameters.H]  # H: the lever, pairs lost each year to a managed pressure (bycatch cap)
value = 10  # pairs per year
unit = "pair/yr"  # the unit of the rate
name = "permitted losses"  # label shown in the dossier
range = [0, 60]  # explored in diagrams and sliders

[model]  # the law: d(state)/dt = rate
rate = "I + R*(N/h)^n/(1 + (N/h)^n) - d*N - H"  # arrivals plus recruits minus losses
lever = "H"  # the parameter the manager sets
yield = "H"  # pairs removed per year
time_unit = "yr"  # the clock of the rate

[[policies]]  # an alternative to compare with the base model
name = "current cap"  # policy name
values = { H = 10 }  # parameter values that differ from the base model

[[policies]]  # a second alternative
name = "no permitted losses"  # policy name
values = { H = 0 }  # losses removed entirely
"""


def _template(name: str, description: str, law: str, equation: str, body: str) -> Template:
    return Template(name, description, law, equation, _top(name, law, equation) + body)


_ALL: tuple[Template, ...] = (
    _template(
        "exponential-growth",
        "unchecked growth with a constant cull: dN/dt = r N - H",
        "Malthus (1798) exponential growth",
        "dN/dt = r N - H",
        _EXPONENTIAL_GROWTH,
    ),
    _template(
        "exponential-decay",
        "first-order breakdown with a treatment lever: dC/dt = -(k + a) C",
        "first-order decay (exponential decay law)",
        "dC/dt = -(k + a) C",
        _EXPONENTIAL_DECAY,
    ),
    _template(
        "logistic-quota",
        "logistic stock under a fixed catch limit: dB/dt = r B (1 - B/K) - H",
        "Schaefer (1954) surplus production",
        "dB/dt = r B (1 - B/K) - H",
        _LOGISTIC_QUOTA,
    ),
    _template(
        "logistic-effort",
        "logistic stock under fixed effort: dB/dt = r B (1 - B/K) - q E B",
        "Schaefer (1954) surplus production with catch proportional to effort",
        "dB/dt = r B (1 - B/K) - q E B",
        _LOGISTIC_EFFORT,
    ),
    _template(
        "gompertz-quota",
        "Gompertz stock under a fixed catch limit: dB/dt = r B log(K/B) - H",
        "Fox (1970) surplus production",
        "dB/dt = r B log(K/B) - H",
        _GOMPERTZ_QUOTA,
    ),
    _template(
        "pella-tomlinson-quota",
        "generalised production under a catch limit: (r/p) B (1 - (B/K)^p) - H",
        "Pella and Tomlinson (1969) generalised production",
        "dB/dt = (r/p) B (1 - (B/K)^p) - H",
        _PELLA_TOMLINSON_QUOTA,
    ),
    _template(
        "allee-quota",
        "hunted herd with a strong Allee effect: dN/dt = r N (N/A - 1)(1 - N/K) - H",
        "strong Allee effect (Allee 1931)",
        "dN/dt = r N (N/A - 1)(1 - N/K) - H",
        _ALLEE_QUOTA,
    ),
    _template(
        "logistic-predation",
        "insect held down by saturating predation: r N (1 - N/K) - Bmax N^2/(A^2 + N^2)",
        "Ludwig, Jones and Holling (1978) spruce budworm model",
        "dN/dt = r N (1 - N/K) - Bmax N^2/(A^2 + N^2)",
        _LOGISTIC_PREDATION,
    ),
    _template(
        "nutrient-recycling",
        "lake phosphorus with sediment recycling, loading as lever: L - s P + recycling",
        "Carpenter, Ludwig and Brock (1999) lake phosphorus model",
        "dP/dt = L - s P + rmax (P/m)^q / (1 + (P/m)^q)",
        _NUTRIENT_RECYCLING,
    ),
    _template(
        "aquifer-pumping",
        "aquifer water balance under pumping: dh/dt = (R - Q)/Sy - k (h - h0)",
        "single-compartment water balance (conservation of mass)",
        "dh/dt = (R - Q)/Sy - k (h - h0)",
        _AQUIFER_PUMPING,
    ),
    _template(
        "mixed-tank",
        "well-mixed tank of constant volume: dx/dt = Q c_in - Q x / V",
        "mass balance of a continuously stirred tank",
        "dx/dt = Q c_in - Q x / V",
        _MIXED_TANK,
    ),
    _template(
        "newton-cooling",
        "temperature relaxing to its surroundings, in °C and hours: dT/dt = -k (T - A)",
        "Newton's law of cooling",
        "dT/dt = -k (T - A)",
        _NEWTON_COOLING,
    ),
    _template(
        "drag-fall",
        "falling load with power-law drag: dv/dt = g - (c/m)(v/v1)^p",
        "Newton's second law with power-law drag",
        "dv/dt = g - (c/m) (v/v1)^p",
        _DRAG_FALL,
    ),
    _template(
        "sigmoid-switch",
        "population with switch-like (Hill) recruitment and two stable states",
        "recruitment by a Hill (1910) function",
        "dN/dt = I + R (N/h)^n / (1 + (N/h)^n) - d N - H",
        _SIGMOID_SWITCH,
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
