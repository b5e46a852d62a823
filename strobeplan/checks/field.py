"""Sound-field rules: where the phase at the view comes from and whether it holds still."""

from __future__ import annotations

from ..stages.field import NODE_FRACTION
from .registry import Hit, rule

# A session's temperature may move the frozen phase by at most this much when no sweep
# step is finer (common practice: 10 deg is about what an eye notices in a frozen wave).
TEMPERATURE_PHASE_LIMIT_DEG = 10.0


@rule("field.standing_without_reflector", "warning",
      trigger="wave.kind = 'standing' with a single emitter, no [[reflector]] and "
              "strobe.calibration_offset 0: the phase at the view is that of a travelling "
              "wave from the emitter, not of the standing wave",
      fix="add the reflector as a [[reflector]] table (position, normal, reflection), or "
          "measure the phase on the bench and give it as strobe.calibration_offset",
      example=("levitator-40k", {"reflector": None}))
def standing_without_reflector(plan):
    rig = plan.rig
    if plan.field is None or rig.wave.kind != "standing" or rig.reflector:
        return None
    if len(rig.emitters) > 1:  # opposed emitters make their own standing wave
        return None
    if rig.strobe.calibration_offset != 0:
        return None
    return Hit("a standing wave is declared but the field has no reflector: the phase at "
               "the view is a travelling wave's, and the flash may land anywhere in the "
               "cycle of the real standing wave")


@rule("field.view_near_node", "warning",
      trigger=f"|p| at the view point is under {NODE_FRACTION:.0%} of the largest |p| within "
              "half a wavelength of it (a pressure node: the image carries little signal "
              "there and its phase jumps by 180 deg across it)",
      fix="move the view point ([view] point or emitter.distance_to_view) towards an "
          "antinode, e.g. a quarter wavelength",
      example=("levitator-40k", {"emitter.distance_to_view": "62.15 mm"}))
def view_near_node(plan):
    f = plan.field
    if f is None or f.node_ratio >= NODE_FRACTION:
        return None
    return Hit(lambda: f"the view sits near a pressure node: |p| there is "
                       f"{f.node_ratio:.1%} of the largest within half a wavelength",
               value=f.node_ratio, limit=NODE_FRACTION, unit="1")


@rule("field.temperature_moves_phase", "warning",
      trigger="air.temperature_range moves the frozen phase at the view (through the speed "
              f"of sound) by more than the sweep step, or {TEMPERATURE_PHASE_LIMIT_DEG:g} "
              "deg without a sweep",
      fix="keep the air temperature steadier (enclose the rig), re-measure "
          "strobe.calibration_offset during the session, or shorten the acoustic path",
      example=("rangefinder-58k", {"air.temperature_range": ["10 degC", "30 degC"]}))
def temperature_moves_phase(plan):
    f, t = plan.field, plan.timing
    if f is None or f.temperature_range_phase_deg is None:
        return None
    limit = TEMPERATURE_PHASE_LIMIT_DEG
    if t is not None and t.sweep_step_deg is not None:
        limit = min(limit, t.sweep_step_deg)
    if f.temperature_range_phase_deg <= limit:
        return None
    lo, hi = plan.rig.air.temperature_range
    return Hit(lambda: f"{lo - 273.15:.1f}-{hi - 273.15:.1f} degC moves the phase at the view "
                       f"by {f.temperature_range_phase_deg:.1f} deg",
               value=f.temperature_range_phase_deg, limit=limit, unit="deg")


# The image's phase at the view may differ from the pressure's by this much before it is
# worth saying (common practice: about the phase step of a 36-frame sweep).
LINE_OF_SIGHT_NOTE_DEG = 10.0


@rule("field.image_phase_differs", "note",
      trigger=f"the line-of-sight integral of the pressure through the view ([view] depth, "
              f"light_axis) has a phase more than {LINE_OF_SIGHT_NOTE_DEG:g} deg from the "
              "pressure's at the view point: the picture shows the wave shifted by that much "
              "from strobe.phase",
      fix="to see a given phase in the picture, subtract field.line_of_sight_phase_deg from "
          "strobe.phase (analyse already allows for it when it measures the offset)",
      example=("levitator-40k", {}))
def image_phase_differs(plan):
    f = plan.field
    if f is None or f.line_of_sight_phase_deg is None \
            or abs(f.line_of_sight_phase_deg) <= LINE_OF_SIGHT_NOTE_DEG:
        return None
    return Hit(lambda: f"the picture shows the wave's line-of-sight integral, whose phase at "
                       f"the view is {f.line_of_sight_phase_deg:+.1f} deg from the pressure's "
                       "there (a beam spreading across the light)",
               value=f.line_of_sight_phase_deg, limit=LINE_OF_SIGHT_NOTE_DEG, unit="deg")
