"""Media: a diffusivity, heat inputs, partition, reaction, Arrhenius laws and schedules, D(c)."""

from __future__ import annotations

import math

import numpy as np

from service.api.ranges import (
    ACTIVATION_RANGE_K,
    BOLTZMANN,
    CONDUCTIVITY_RANGE,
    D0_RANGE,
    DENSITY_RANGE,
    DIFFUSIVITY_RANGE_M2_PER_S,
    DURATION_RANGE_S,
    GAS_CONSTANT,
    RAMP_RATE_RANGE_K_PER_S,
    RATE_RANGE,
    SPECIFIC_HEAT_RANGE,
    in_range,
)
from service.api.translate_base import TranslatorBase
from service.errors import InvalidInput, UnitError
from service.models import requests as rq
from service.physics import (
    Arrhenius,
    Medium,
    NonlinearDiffusivity,
    Schedule,
    ScheduleSegment,
)


class MediaMixin(TranslatorBase):
    """Reads the medium and the temperatures it follows."""

    def medium(
        self, request: rq.Medium, at: str = "/medium", diffusivity_given: float | None = None
    ) -> Medium:
        """The medium; ``diffusivity_given`` stands in for the diffusivity when it follows
        from an Arrhenius law at the case's temperature."""
        if request.thermal_diffusivity is not None and request.arrhenius is None:
            raise InvalidInput(
                "'thermal_diffusivity' goes with an 'arrhenius' medium under a 'schedule' (for "
                "heat, give it as 'diffusivity')",
                at + "/thermal_diffusivity",
            )
        conductivity = (
            self.quantity(
                request.conductivity, "conductivity", CONDUCTIVITY_RANGE, at + "/conductivity"
            )
            if request.conductivity is not None
            else None
        )
        nonlinear = self._nonlinear(request, at)
        if nonlinear is not None:
            # a placeholder until the final value is known (see to_case)
            diffusivity_given = float(nonlinear.diffusivity(np.array(0.0)))
        if diffusivity_given is not None:
            diffusivity = in_range(
                diffusivity_given,
                DIFFUSIVITY_RANGE_M2_PER_S,
                "the diffusivity D0·exp(−Q/RT)",
                "m^2/s",
                at + "/arrhenius",
            )
        elif request.diffusivity is not None:
            diffusivity = self.quantity(
                request.diffusivity, "diffusivity", DIFFUSIVITY_RANGE_M2_PER_S, at + "/diffusivity"
            )
        else:
            assert request.density is not None and request.specific_heat is not None
            assert conductivity is not None
            density = self.quantity(request.density, "density", DENSITY_RANGE, at + "/density")
            specific_heat = self.quantity(
                request.specific_heat, "specific_heat", SPECIFIC_HEAT_RANGE, at + "/specific_heat"
            )
            diffusivity = in_range(
                conductivity / (density * specific_heat),
                DIFFUSIVITY_RANGE_M2_PER_S,
                "the thermal diffusivity k/(ρ·c_p)",
                "m^2/s",
                at,
            )
        partition = request.partition if request.partition is not None else 1.0
        if nonlinear is not None:
            return Medium(diffusivity, conductivity, partition, nonlinear=nonlinear)
        reaction = 0.0
        if request.reaction_rate is not None:
            reaction = self.quantity(
                request.reaction_rate, "rate", RATE_RANGE, at + "/reaction_rate"
            )
        return Medium(diffusivity, conductivity, partition, reaction)

    def _nonlinear(self, request: rq.Medium, at: str) -> NonlinearDiffusivity | None:
        """D(c) from a table (linear in log D) or an exponential law."""
        if request.diffusivity_exponential is not None:
            law = request.diffusivity_exponential
            d0 = self.quantity(law.d0, "diffusivity", D0_RANGE, at + "/diffusivity_exponential/d0")
            return NonlinearDiffusivity(d0=d0, beta=law.beta)
        if request.diffusivity_table is None:
            return None
        values: list[float] = []
        logs: list[float] = []
        for i, (value, raw) in enumerate(request.diffusivity_table):
            where = f"{at}/diffusivity_table/{i}"
            if not math.isfinite(value) or (values and value <= values[-1]):
                raise InvalidInput("the table's values must be finite and increase strictly", where)
            d = self.quantity(raw, "diffusivity", DIFFUSIVITY_RANGE_M2_PER_S, where + "/1")
            values.append(value)
            logs.append(math.log(d))
        return NonlinearDiffusivity(table_c=tuple(values), table_log_d=tuple(logs))

    def arrhenius(self, request: rq.ArrheniusRequest, at: str) -> Arrhenius:
        """D0 and the activation temperature Q/R (per mole) or Q/k_B (per atom)."""
        raw = request.activation_energy
        where = at + "/activation_energy"
        if not isinstance(raw, str):
            raise InvalidInput(
                "give the activation energy with its unit: J/mol, kJ/mol, kcal/mol or eV", where
            )
        try:
            energy = self.units.to_si(raw, "molar_energy", where)
            activation = energy / GAS_CONSTANT
        except UnitError:
            try:
                energy = self.units.to_si(raw, "energy", where)
            except UnitError as exc:
                raise InvalidInput(
                    f"{raw!r} is not an activation energy: use J/mol, kJ/mol, kcal/mol or eV "
                    "(per atom)",
                    where,
                ) from exc
            activation = energy / BOLTZMANN
        in_range(activation, ACTIVATION_RANGE_K, "the activation energy over R", "K", where)
        if request.d0 is not None:
            d0 = self.quantity(request.d0, "diffusivity", D0_RANGE, at + "/d0")
        else:
            assert request.d_ref is not None and request.t_ref is not None
            d_ref = self.quantity(
                request.d_ref, "diffusivity", DIFFUSIVITY_RANGE_M2_PER_S, at + "/d_ref"
            )
            t_ref = self.temperature(request.t_ref, at + "/t_ref")
            d0 = d_ref * math.exp(activation / t_ref)
            if not math.isfinite(d0):
                raise InvalidInput(
                    "D0 = d_ref·exp(Q/(R·t_ref)) overflows: check the activation energy and the "
                    "reference temperature",
                    at,
                )
        return Arrhenius(d0, activation)

    def _ramp_duration(self, raw: float | str, change_k: float, pointer: str) -> float:
        """How long a ramp at ``raw`` (a temperature difference per time) takes to change the
        temperature by ``change_k``."""
        rate = abs(self.units.to_si(raw, "temperature_rate", pointer))
        rate = in_range(rate, RAMP_RATE_RANGE_K_PER_S, "a ramp rate", "K/s", pointer)
        if change_k == 0.0:
            raise InvalidInput(
                "a ramp to the temperature it starts at takes no time at any rate; give a "
                "'hold' instead",
                pointer,
            )
        return in_range(abs(change_k) / rate, DURATION_RANGE_S, "a ramp's duration", "s", pointer)

    def schedule(self, steps: list[rq.ScheduleStep], law: Arrhenius) -> Schedule:
        """Holds and ramps from the starting temperature, in kelvin and seconds."""
        first = steps[0]
        if first.start_at is None:
            raise InvalidInput("a schedule begins with {'start_at': T}", "/schedule/0")
        current = self.temperature(first.start_at, "/schedule/0/start_at")
        segments = []
        for i, step in enumerate(steps[1:], start=1):
            at = f"/schedule/{i}"
            if step.start_at is not None:
                raise InvalidInput("only the first step is 'start_at'", at)
            if step.hold is not None:
                assert step.at is not None
                duration = self._duration(step.hold, at + "/hold")
                current = self.temperature(step.at, at + "/at")
                segments.append(ScheduleSegment(current, current, duration, True))
            else:
                assert step.ramp_to is not None
                target = self.temperature(step.ramp_to, at + "/ramp_to")
                if step.over is not None:
                    duration = self._duration(step.over, at + "/over")
                else:
                    assert step.rate is not None
                    duration = self._ramp_duration(step.rate, target - current, at + "/rate")
                segments.append(ScheduleSegment(current, target, duration, False))
                current = target
        return Schedule(law, tuple(segments))
