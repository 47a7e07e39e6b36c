"""How many kilovolts does this gap need to spark, and how wide may it be for the coil?

Breakdown of a gas gap depends on the gas density times the gap (Paschen's similarity
law), not on pressure alone. The gas in the cylinder keeps its mass while it is
compressed, so its density at the spark is the intake density times the volume ratio at
that moment, whatever the temperature rise (the polytropic exponent cancels). The
density is expressed as the pressure the same gas would have at 293 K, the reference of
the uniform-field relation, and the breakdown voltage follows from that pressure × gap.

The moment is the spark: by default a typical full-load timing (25° before top dead
centre), where the charge is well short of its top-dead-centre density. The
top-dead-centre figure, about twice a running engine's demand, is reported beside it as
the upper bound.

These are ESTIMATES FOR COMPARING CHOICES (a wider gap, more boost, a higher compression
ratio), not a maker's gap specification: a real gap has a non-uniform field, hot
electrodes, fuel vapour and residual gas, and wears. The values are guidance; the engine
maker's service data, local regulations and licensed practice come first.

Pure floats: bar (absolute), kelvin, mm, kV.
"""
from __future__ import annotations

import math
from functools import lru_cache
from typing import NamedTuple

# Specific gas constant of dry air, J/(kg·K) (ISO 2533:1975 standard atmosphere,
# R = 287.052 87; from memory).
AIR_GAS_CONSTANT_J_PER_KG_K = 287.05
# The uniform-field relation's reference temperature, 20 °C (Kuffel, Zaengl & Kuffel).
REFERENCE_TEMPERATURE_K = 293.0
PA_PER_BAR = 1.0e5  # exact (NIST SP 811, 2008, appendix B)
PA_PER_TORR = 133.3224  # NIST SP 811, 2008, appendix B
TORR_PER_BAR = PA_PER_BAR / PA_PER_TORR

# Paschen constants for air (Raizer, Gas Discharge Physics, table 4.1, from memory; the
# same values cited from Bazelyan & Raizer, Spark Discharge, published): A in 1/(cm·Torr),
# B in V/(cm·Torr), γ the secondary-emission coefficient. Fitted for E/p ≈ 100–800.
PASCHEN_A = 15.0
PASCHEN_B = 365.0
PASCHEN_GAMMA = 0.01

# Kuffel, Zaengl & Kuffel, High Voltage Engineering: Fundamentals, 2nd ed. (from memory):
# uniform-field air at 20 °C, Vb = 6.72·√(pd) + 24.36·pd kV with p in bar and d in cm.
UNIFORM_FIELD_ROOT_KV = 6.72
UNIFORM_FIELD_LINEAR_KV = 24.36

# Keep this fraction of the available ignition voltage in reserve: the demand rises as
# electrodes wear and the gap grows, and with lean or cold running. Grade: common
# practice (ignition reserve of a fifth or more of the coil's output), from memory.
IGNITION_RESERVE_FRACTION = 0.20

# Intake conditions assumed when a request gives none: sea-level standard atmosphere
# (ISO 2533:1975: 101.325 kPa, 15 °C; published), i.e. an unthrottled, unboosted engine
# on a cool day — a dense charge, so the demand is not underestimated. The same
# atmosphere turns a gauge boost pressure into the absolute intake pressure.
STANDARD_INTAKE_PRESSURE_BAR = 1.01325
STANDARD_INTAKE_TEMPERATURE_K = 288.15

# The spark timing assumed when a head gives none: 25° before top dead centre. Full-load
# timing is commonly some 20–35° before top dead centre (reference-values.md, from
# memory); 25° lies on the later, denser side of that band's middle, so a typical
# full-load demand is not underestimated. Grade: from memory.
TYPICAL_FULL_LOAD_SPARK_ADVANCE_DEG = 25.0
# R = l/a when a head gives no stroke and rod length: 3.5, the middle of the 3 to 4 that
# Heywood gives for small and medium engines (Internal Combustion Engine Fundamentals,
# 1988, section 2.2; from memory). At 25° the volume depends little on it: over R = 3 to 4
# the density ratio moves by about 2 % (a larger R is a denser charge).
TYPICAL_ROD_RATIO = 3.5


def air_density_kg_m3(pressure_bar: float, temperature_k: float) -> float:
    """Density of dry air from absolute pressure and temperature."""
    # ideal gas law: ρ = p / (R·T)
    return pressure_bar * PA_PER_BAR / (AIR_GAS_CONSTANT_J_PER_KG_K * temperature_k)


def density_equivalent_pressure_bar(density_kg_m3: float) -> float:
    """The pressure air of this density would have at 293 K (the breakdown relations' reference)."""
    # ideal gas law at the reference temperature: p = ρ·R·T_ref
    return density_kg_m3 * AIR_GAS_CONSTANT_J_PER_KG_K * REFERENCE_TEMPERATURE_K / PA_PER_BAR


def rod_ratio_of(stroke_mm: float, rod_length_mm: float) -> float:
    """R = l/a, the connecting rod's length over the crank radius (half the stroke)."""
    return rod_length_mm / (stroke_mm / 2.0)


def cylinder_volume_ratio(crank_angle_deg: float, compression_ratio: float, rod_ratio: float) -> float:
    """V/Vc, the cylinder volume over the clearance volume, at a crank angle from TDC.

    The bore and the stroke cancel out of the ratio; only the rod ratio R = l/a is needed.
    The angle may be given before or after top dead centre: the geometry is symmetric.
    """
    theta = math.radians(crank_angle_deg)
    # Heywood, Internal Combustion Engine Fundamentals (1988), eq. 2.6 (from memory):
    # V/Vc = 1 + ½(rc − 1)·[R + 1 − cos θ − √(R² − sin² θ)]
    return 1.0 + 0.5 * (compression_ratio - 1.0) * (
        rod_ratio + 1.0 - math.cos(theta) - math.sqrt(rod_ratio**2 - math.sin(theta) ** 2)
    )


def density_ratio_at_spark(compression_ratio: float, spark_advance_deg: float = 0.0,
                           rod_ratio: float = TYPICAL_ROD_RATIO) -> float:
    """How much denser the charge is at the spark than in the intake: the compression
    ratio over the slider-crank volume ratio at that crank angle (at top dead centre,
    an advance of 0, the compression ratio itself: the densest moment)."""
    # mass is conserved: ρ_spark/ρ_intake = V_intake/V_spark = rc / (V/Vc)
    return compression_ratio / cylinder_volume_ratio(spark_advance_deg, compression_ratio, rod_ratio)


def uniform_field_breakdown_kv(pressure_bar: float, gap_mm: float) -> float:
    """Breakdown voltage of a uniform-field air gap; `pressure_bar` is density-equivalent at 293 K."""
    pd = pressure_bar * gap_mm / 10.0  # bar·cm
    # Kuffel, Zaengl & Kuffel, 2nd ed.: Vb = 6.72·√(pd) + 24.36·pd kV (p in bar, d in cm)
    return UNIFORM_FIELD_ROOT_KV * math.sqrt(pd) + UNIFORM_FIELD_LINEAR_KV * pd


def _paschen_log_constant() -> float:
    # ln(ln(1 + 1/γ)): the secondary-emission term of the Townsend criterion
    return math.log(math.log(1.0 + 1.0 / PASCHEN_GAMMA))


def paschen_breakdown_kv(pd_torr_cm: float) -> float:
    """Paschen's law for air at a pressure × gap in Torr·cm (density-equivalent at 293 K).

    Only meaningful to the right of the vertical asymptote (A·pd > ln(1 + 1/γ)); raises
    ValueError there.
    """
    denominator = math.log(PASCHEN_A * pd_torr_cm) - _paschen_log_constant()
    if denominator <= 0.0:
        raise ValueError(f"no breakdown predicted at pd = {pd_torr_cm} Torr·cm (left of Paschen's asymptote)")
    # Raizer, Gas Discharge Physics, eq. 4.8 (from memory): Vb = B·pd / (ln(A·pd) − ln(ln(1 + 1/γ)))
    return PASCHEN_B * pd_torr_cm / denominator / 1000.0


def paschen_minimum() -> tuple[float, float]:
    """(pd in Torr·cm, voltage in V) at the minimum of Paschen's curve for air."""
    # dVb/d(pd) = 0 where ln(A·pd) − C = 1: pd_min = e^(1+C)/A, Vb_min = B·pd_min
    pd_min = math.exp(1.0 + _paschen_log_constant()) / PASCHEN_A
    return pd_min, PASCHEN_B * pd_min


@lru_cache(maxsize=1)
def paschen_crossover_torr_cm() -> float:
    """The p·d above which the uniform-field relation replaces Paschen's law.

    The two curves cross twice; the upper crossing (about 19 Torr·cm, where Paschen's own
    E/p has fallen to about 88 V/(cm·Torr), just below the 100–800 it was fitted for) is
    where Paschen's law leaves its range and the uniform-field relation, fitted to
    measured breakdown at higher p·d, takes over. Switching where they are equal keeps
    the demand continuous, so a bigger gap never lowers it. Found by bisection.
    """

    def difference(pd_torr_cm: float) -> float:
        return paschen_breakdown_kv(pd_torr_cm) - uniform_field_breakdown_kv(pd_torr_cm / TORR_PER_BAR, 10.0)

    low, high = 5.0, 100.0  # Paschen is below the uniform-field curve at 5, above at 100
    for _ in range(80):
        middle = 0.5 * (low + high)
        if difference(middle) < 0.0:
            low = middle
        else:
            high = middle
    return 0.5 * (low + high)


def breakdown_kv(pressure_bar: float, gap_mm: float) -> float:
    """Breakdown voltage of air at a density-equivalent pressure (bar at 293 K) and gap.

    Paschen's law up to the crossover p·d, the uniform-field relation above it (see
    `paschen_crossover_torr_cm`). Left of Paschen's minimum (sub-micrometre gaps at engine
    densities, or near-vacuum) the formula rises again, but between real electrodes the
    discharge then takes a longer path with p·d near the minimum, so the minimum voltage
    is returned (the usual reading of the left branch, Raizer, Gas Discharge Physics, ch. 4;
    from memory).
    That also keeps the demand from ever falling as the gap widens.
    """
    pd_torr_cm = pressure_bar * TORR_PER_BAR * gap_mm / 10.0
    pd_min, volts_min = paschen_minimum()
    if pd_torr_cm <= pd_min:
        return volts_min / 1000.0
    if pd_torr_cm <= paschen_crossover_torr_cm():
        return paschen_breakdown_kv(pd_torr_cm)
    return uniform_field_breakdown_kv(pressure_bar, gap_mm)


def spark_pressure_bar(intake_pressure_bar: float, intake_temperature_k: float, compression_ratio: float,
                       spark_advance_deg: float = 0.0, rod_ratio: float = TYPICAL_ROD_RATIO) -> float:
    """The density-equivalent pressure (bar at 293 K) of the charge at the spark; the
    intake pressure is absolute."""
    intake_density = air_density_kg_m3(intake_pressure_bar, intake_temperature_k)
    ratio = density_ratio_at_spark(compression_ratio, spark_advance_deg, rod_ratio)
    return density_equivalent_pressure_bar(intake_density * ratio)


def voltage_demand_kv(gap_mm: float, equivalent_pressure_bar: float) -> float:
    """The estimated voltage a gap needs to spark in charge of this density."""
    return breakdown_kv(equivalent_pressure_bar, gap_mm)


def largest_gap_mm(voltage_kv: float, equivalent_pressure_bar: float, high_mm: float = 50.0) -> float:
    """The widest gap whose demand stays at or below `voltage_kv` (capped at `high_mm`).

    Above the crossover the uniform-field relation is a quadratic in √(pd) and is solved
    in closed form; below it (near-vacuum densities only) Paschen's law is inverted by
    bisection on its rising branch, right of its minimum. No gap sparks below that minimum.
    """
    crossover_pd = paschen_crossover_torr_cm()
    pd_torr_cm = _uniform_field_pd_bar_cm(voltage_kv) * TORR_PER_BAR
    if pd_torr_cm <= crossover_pd:
        pd_min, volts_min = paschen_minimum()
        if voltage_kv * 1000.0 < volts_min:
            return 0.0
        low, high = pd_min, crossover_pd
        for _ in range(60):
            middle = 0.5 * (low + high)
            if paschen_breakdown_kv(middle) <= voltage_kv:
                low = middle
            else:
                high = middle
        pd_torr_cm = low
    return min(high_mm, pd_torr_cm / (equivalent_pressure_bar * TORR_PER_BAR) * 10.0)


def _uniform_field_pd_bar_cm(voltage_kv: float) -> float:
    """p·d (bar·cm) at which the uniform-field relation gives `voltage_kv`."""
    a, b = UNIFORM_FIELD_ROOT_KV, UNIFORM_FIELD_LINEAR_KV
    # b·x² + a·x − V = 0 with x = √(pd): x = (−a + √(a² + 4·b·V)) / (2·b)
    root = (-a + math.sqrt(a * a + 4.0 * b * voltage_kv)) / (2.0 * b)
    return root * root


class SparkEstimate(NamedTuple):
    """What the gap-voltage estimate computed (a NamedTuple: one is made per fit check)."""

    intake_density_kg_m3: float
    density_ratio: float
    spark_density_kg_m3: float
    equivalent_pressure_bar: float
    gap_mm: float
    demand_kv: float
    demand_at_tdc_kv: float  # the upper bound: the same gap with the charge at top dead centre
    available_kv: float
    usable_kv: float
    reserve_fraction: float
    largest_gap_mm: float

    @property
    def short_of_reserve(self) -> bool:
        return self.demand_kv > self.usable_kv


def estimate_spark(*, gap_mm: float, available_kv: float, compression_ratio: float,
                   intake_pressure_bar: float, intake_temperature_k: float,
                   spark_advance_deg: float = TYPICAL_FULL_LOAD_SPARK_ADVANCE_DEG,
                   rod_ratio: float = TYPICAL_ROD_RATIO,
                   reserve_fraction: float = IGNITION_RESERVE_FRACTION) -> SparkEstimate:
    """Demand of this gap at the spark against the ignition's available voltage less the
    reserve, with the top-dead-centre demand beside it. The intake pressure is absolute."""
    intake_density = air_density_kg_m3(intake_pressure_bar, intake_temperature_k)
    ratio = density_ratio_at_spark(compression_ratio, spark_advance_deg, rod_ratio)
    spark_density = intake_density * ratio
    pressure = density_equivalent_pressure_bar(spark_density)
    usable = available_kv * (1.0 - reserve_fraction)
    return SparkEstimate(
        intake_density_kg_m3=intake_density,
        density_ratio=ratio,
        spark_density_kg_m3=spark_density,
        equivalent_pressure_bar=pressure,
        gap_mm=gap_mm,
        demand_kv=voltage_demand_kv(gap_mm, pressure),
        demand_at_tdc_kv=voltage_demand_kv(
            gap_mm, density_equivalent_pressure_bar(intake_density * compression_ratio)),
        available_kv=available_kv,
        usable_kv=usable,
        reserve_fraction=reserve_fraction,
        largest_gap_mm=largest_gap_mm(usable, pressure),
    )
