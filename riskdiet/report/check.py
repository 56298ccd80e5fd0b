"""What riskdiet read from a study: the text of the ``check`` command.

Plain aligned text (readable without colour, in a terminal or a log): the
predator's fields with units and notes, derived values marked as such, the prey
table with the encounter rates and daily encounter probabilities the model
uses, the scenarios' changes, the uncertainty ranges, the settings and the
warnings. Nothing is solved here.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from riskdiet.fields import display, field_defaults, field_specs
from riskdiet.model import Predator, Prey, Settings, Study, kleiber_basal_mj_per_day

_ESTIMATED = "*"


def _value(value: object) -> str:
    return display(value, blank="(blank)", number=".4g")


def table(header: Sequence[str], rows: Sequence[Sequence[str]], indent: str = "  ",
          right: Sequence[bool] | None = None) -> str:
    """Align rows under a header; columns marked in ``right`` are right-aligned."""
    right = list(right) if right is not None else [False] * len(header)
    widths = [max(len(str(r[i])) for r in [header, *rows]) for i in range(len(header))]
    lines = []
    for row in [header, ["-" * w for w in widths], *rows]:
        cells = [str(c).rjust(w) if right[i] else str(c).ljust(w)
                 for i, (c, w) in enumerate(zip(row, widths, strict=True))]
        lines.append((indent + "  ".join(cells)).rstrip())
    return "\n".join(lines)


def kleiber_note(predator: Predator) -> str:
    """How an estimated daily cost was obtained, in words and numbers.

    References
    ----------
    .. [1] Kleiber, M. (1961). The Fire of Life: An Introduction to Animal
       Energetics. Wiley, New York.
    """
    mass = predator.body_mass_kg
    basal = kleiber_basal_mj_per_day(mass)
    kcal = 70.0 * mass**0.75
    default = field_defaults(Predator)["activity_multiplier"]
    multiplier = predator.activity_multiplier
    why = ("a common-practice assumption, replace with local data"
           if multiplier == default else "as given")
    return (f"estimated from body mass (Kleiber 1961): basal 70 × {mass:g}^0.75 = "
            f"{kcal:.0f} kcal/day = {basal:.3g} MJ/day, × activity multiplier {multiplier:g} "
            f"({why}) = {predator.effective_daily_cost_mj:.3g} MJ/day")


def predator_section(study: Study) -> str:
    p = study.predator
    rows = []
    for name, spec in field_specs(Predator).items():
        value = getattr(p, name)
        shown = _value(value)
        if name == "daily_cost_mj" and p.daily_cost_is_estimated:
            shown = f"{p.effective_daily_cost_mj:.4g} {_ESTIMATED}"
        rows.append([name, shown, spec.unit, study.notes.get(name, "")])
    text = [f"Predator: {p.name}",
            table(["field", "value", "unit", "note"], rows)]
    if p.daily_cost_is_estimated:
        text.append(f"  {_ESTIMATED} daily_cost_mj {kleiber_note(p)}.")
    step = p.reserve_capacity_mj / p.energy_levels
    derived = [f"one energy level = {step:.4g} MJ",
               f"start at level {p.start_level} ({p.start_level * step:.4g} MJ)"]
    if p.currency == "breeding":
        derived.append(f"breeding condition at level {p.breeding_level} "
                       f"({p.breeding_level * step:.4g} MJ)")
    derived.append(f"daily recovery chance while injured 1/{p.recovery_days:g} = "
                   f"{p.recovery_chance_per_day:.4g}")
    text.append("  Derived: " + "; ".join(derived) + ".")
    return "\n".join(text)


def prey_section(study: Study) -> str:
    p = study.predator
    first = []
    for y in study.prey:
        m = y.encounters(p)
        if y.encounters_per_day is not None:
            source = "given"
        else:
            source = (f"{p.search_area_km2_per_day:g} km²/day × {y.density_per_km2:g}/km² "
                      "(search area × density)")
        skill = _value(y.skill_dependent) if y.skill_dependent is not None else (
            f"{_value(y.is_skill_dependent)} (blank: {'risky' if y.risky else 'low-risk'})")
        first.append([y.name, y.group, "risky" if y.risky else "low-risk", skill,
                      f"{m:.4g}", f"{-math.expm1(-m):.4f}", source])
    header = ["name", "group", "risk", "skill_dependent", "encounters_per_day",
              "p(met)/day", "encounters from"]
    second = [[y.name, _value(y.energy_mj), _value(y.handling_days), _value(y.capture_success),
               _value(y.injury_chance), _value(y.injury_energy_mj), _value(y.fatality_chance)]
              for y in study.prey]
    units = {n: s.unit for n, s in field_specs(Prey).items()}
    names = ["energy_mj", "handling_days", "capture_success", "injury_chance",
             "injury_energy_mj", "fatality_chance"]
    text = [f"Prey ({len(study.prey)} types)",
            table(header, first, right=[False, False, False, False, True, True, False]),
            "  p(met)/day is the chance of meeting the prey on a given day, 1 − exp(−m) for m "
            "encounters a day (Poisson encounters).",
            "",
            table(["name", *names], second, right=[False] + [True] * len(names)),
            "  Units: " + ", ".join(f"{n} [{units[n]}]" for n in names) + "."]
    notes = [f"    {y.name}: {y.note}" for y in study.prey if y.note]
    if notes:
        text += ["  Notes:", *notes]
    return "\n".join(text)


def scenario_section(study: Study) -> str:
    text = [f"Scenarios ({len(study.scenarios)}, baseline included)"]
    for sc in study.scenarios:
        text.append(f"  {sc.name}" + (f": {sc.note}" if sc.note else ""))
        for ch in sc.changes:
            text.append(f"    - {ch.describe()}")
    return "\n".join(text)


def uncertainty_section(study: Study) -> str:
    if not study.uncertainty:
        return "Uncertainty ranges: none"
    rows = [[u.prey or "(predator)", u.field, f"{u.low:.4g}", f"{u.high:.4g}", u.shape,
             "" if u.mode is None else f"{u.mode:.4g}", u.scenario or "(every)", u.note]
            for u in study.uncertainty]
    return "\n".join([f"Uncertainty ranges ({len(rows)})",
                      table(["prey", "field", "low", "high", "shape", "mode", "scenario",
                             "note"], rows,
                            right=[False, False, True, True, False, True, False, False])])


def observations_section(study: Study) -> str:
    """The field diet records as read, one row each (MODEL.md section 10)."""
    if not study.observations:
        return "Observations (field diet records): none"
    rows = [[o.prey or "(rate row)", str(o.count), o.kind, f"{o.detection:g}",
             o.scenario or "(baseline)", o.source or "",
             "" if o.predator_days is None else f"{o.predator_days:g}", o.note]
            for o in study.observations]
    compositions = len({o.composition_key for o in study.observations if not o.is_rate})
    return "\n".join([f"Observations ({len(rows)} rows, {compositions} composition(s))",
                      table(["prey", "count", "kind", "detection", "scenario", "source",
                             "predator-days", "note"], rows,
                            right=[False, True, False, True, False, False, True, False])])


def settings_section(study: Study) -> str:
    rows = [[name, _value(getattr(study.settings, name))] for name in field_specs(Settings)]
    return "\n".join(["Settings", table(["field", "value"], rows)])


def font_warnings(study: Study) -> list[str]:
    """Texts holding characters the brief's fonts cannot draw (they would show as boxes)."""
    from riskdiet.report.fonts import undrawable

    texts = [("study_name", study.settings.study_name), ("description",
                                                         study.settings.description)]
    texts += [(f"prey {p.name!r} (name, group, note)", " ".join([p.name, p.group, p.note]))
              for p in study.prey]
    texts += [(f"scenario {sc.name!r} (name, note)", f"{sc.name} {sc.note}")
              for sc in study.scenarios]
    texts += [(f"note of {k}", v) for k, v in study.notes.items()]
    out = []
    for where, text in texts:
        missing = undrawable(text or "")
        if missing:
            chars = " ".join(f"{c} (U+{ord(c):04X})" for c in missing[:8])
            out.append(f"{where}: the brief's font cannot draw {chars}"
                       f"{' …' if len(missing) > 8 else ''}; they will show as boxes in the PDF")
    return out


def notices_section(study: Study) -> str:
    lines = [str(n) for n in study.notices] + font_warnings(study)
    if not lines:
        return "Warnings: none"
    return "\n".join([f"Warnings ({len(lines)})", *(f"  {n}" for n in lines)])


def check_text(study: Study) -> str:
    """Everything riskdiet read from a valid study, as plain text.

    Parameters
    ----------
    study : Study
        A validated study (from :func:`riskdiet.io.load_study`).

    Returns
    -------
    str
        Heading, predator, prey, scenarios, uncertainty, observations, settings and
        warnings.
    """
    head = [f"{study.name}: valid",
            f"Read from {study.source or '(no file)'}"
            + (f"  SHA-256 {study.source_sha256}" if study.source_sha256 else ""),
            f"{len(study.prey)} prey types, {len(study.scenarios)} scenarios (baseline "
            f"included), {len(study.uncertainty)} uncertainty ranges, "
            f"{len(study.notices) + len(font_warnings(study))} warning(s)."]
    sections = [
        "\n".join(head), predator_section(study), prey_section(study), scenario_section(study),
        uncertainty_section(study), observations_section(study), settings_section(study),
        notices_section(study),
        "Values must come from local data; decisions follow wildlife law and the wildlife "
        "authority.",
    ]
    return "\n\n".join(sections) + "\n"
