"""Render a timer export (strobeplan/export.py) as a C99 header or as JSON.

The header holds only constants: no vendor register names, only the model's words
(prescaler, period, compare, repetition), each commented with its unit and the value it
realises. It compiles with ``cc -std=c99 -Wall -Wextra -Werror``.
"""

from __future__ import annotations

import json

from ..export import Export, max_value


def _c_comment(text: str) -> str:
    return text.replace("*/", "* /").replace("\n", " ")


def export_c(exp: Export) -> str:
    wide = max_value(exp) >= 1 << 32
    ctype = "uint64_t" if wide else "uint32_t"
    suffix = "ULL" if wide else "UL"
    m = exp.timer
    lines = [
        "/* Timer constants exported by strobeplan (`strobeplan export`).",
        f" * Rig: {_c_comment(exp.rig)}",
        f" * Counter model: {m.name}: {m.bits}-bit counters, prescaler 1..{m.prescaler_max}"
        f"{' (powers of two)' if m.prescaler_power_of_two else ''}, {m.channels} compare "
        f"channels, reload per period: {'yes' if m.reload_per_period else 'no'}, chainable: "
        f"{'yes' if m.chainable else 'no'}.",
        " * All counters count the controller clock divided by their prescaler and start",
        " * together at tick 0. Values are in counts of that counter. A chained counter is",
        " * two counters: value = high * 2^SP_COUNTER_BITS + low.",
        f" * Mode: {exp.mode}; every value reproduces the plan exactly: "
        f"{'yes' if exp.exact else 'no'}.",
        *[f" * Note: {_c_comment(n)}." for n in exp.notes],
        " */",
        "#ifndef STROBEPLAN_TIMERS_H",
        "#define STROBEPLAN_TIMERS_H",
        "",
        "#include <stdint.h>",
        "",
        f"typedef {ctype} sp_count_t; /* wide enough for every value below */",
        "",
        f"#define SP_CLOCK_HZ {int(round(exp.clock_hz))}{suffix} /* controller clock [Hz]; "
        f"1 tick = {1e9 / exp.clock_hz:.6g} ns */",
        f"#define SP_COUNTER_BITS {m.bits}u /* counter width [bits] */",
        f"#define SP_FRAMES {len(exp.frames)}u /* rows in the per-frame table (it repeats) */",
        f"#define SP_FLASH_CONTINUOUS {1 if exp.continuous else 0}u /* 1: every flash "
        "compare match fires; 0: only the enabled repetitions */",
        f"#define SP_FRAME_TRIGGER {1 if exp.trigger else 0}u /* 1: the frame counter "
        "drives the camera trigger */",
        "",
    ]
    for c in exp.counters.values():
        up = c.name.upper()
        lines += [
            f"/* {c.name} counter: {c.role}; fit: {c.fit} */",
            f"#define SP_{up}_PRESCALER {c.prescaler}{suffix} /* clock divider: counts at "
            f"{exp.clock_hz / c.prescaler:.9g} Hz */",
            f"#define SP_{up}_CHAINED {1 if c.chained else 0}u /* 1: two chained counters */",
            f"#define SP_{up}_PERIOD {c.period.counts}{suffix} /* {_c_comment(c.period.comment)}"
            " */",
        ]
        for name, v in c.values.items():
            lines.append(f"#define SP_{up}_{name.upper()} {v.counts}{suffix} /* "
                         f"{_c_comment(v.comment)} */")
        if c.table:
            lines.append(f"static const sp_count_t SP_{up}_COMPARE[{len(c.table)}] = {{")
            lines += [f"    {v.counts}{suffix}, /* {_c_comment(v.comment)} */" for v in c.table]
            lines.append("};")
        lines.append("")
    for attr, name, what in (
            ("flash_compare", "SP_FLASH_COMPARE", "flash edge compare on the flash counter"),
            ("trigger_compare", "SP_TRIGGER_COMPARE", "camera trigger compare on the frame "
                                                      "counter"),
            ("enable_compare", "SP_ENABLE_COMPARE", "first flash enabled: compare on the "
                                                    "frame counter"),
            ("repetition", "SP_REPETITION", "flashes enabled per frame")):
        lines.append(f"/* per frame: {what} [counts] */")
        lines.append(f"static const sp_count_t {name}[SP_FRAMES] = {{")
        lines += [f"    {getattr(r, attr).counts}{suffix}, /* "
                  f"{_c_comment(getattr(r, attr).comment)} */" for r in exp.frames]
        lines += ["};", ""]
    lines += ["#endif /* STROBEPLAN_TIMERS_H */", ""]
    return "\n".join(lines)


def _value(v) -> dict:
    return {"counts": v.counts, "comment": v.comment}


def export_json(exp: Export) -> str:
    m = exp.timer
    out = {
        "format": "strobeplan.export", "version": 1, "rig": exp.rig,
        "clock_hz": exp.clock_hz, "mode": exp.mode, "exact": exp.exact,
        "continuous": exp.continuous, "trigger": exp.trigger,
        "timer": {"profile": m.name, "assumed": not exp.timer_given, "bits": m.bits,
                  "prescaler_max": m.prescaler_max,
                  "prescaler_power_of_two": m.prescaler_power_of_two,
                  "channels": m.channels, "reload_per_period": m.reload_per_period,
                  "chainable": m.chainable},
        "counters": {
            c.name: {"role": c.role, "fit": c.fit, "prescaler": c.prescaler,
                     "chained": c.chained, "period": _value(c.period),
                     **{k: _value(v) for k, v in c.values.items()},
                     **({"compare": [_value(v) for v in c.table]} if c.table else {})}
            for c in exp.counters.values()},
        "frames": [{"flash_compare": _value(r.flash_compare),
                    "trigger_compare": _value(r.trigger_compare),
                    "enable_compare": _value(r.enable_compare),
                    "repetition": _value(r.repetition)} for r in exp.frames],
        "notes": exp.notes,
    }
    return json.dumps(out, indent=2, allow_nan=False) + "\n"
