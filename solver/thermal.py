"""The heat part of a job spec: the fluid's thermal properties and the thermal condition of walls and bodies.

Temperatures are in °C, heat fluxes in W/m² (positive: heat flows from the surface into the fluid). The
temperature is carried by the flow and does not act back on it (forced convection).

Without ``conductivity`` and ``heat_capacity`` the fluid is water at 20 °C: thermal conductivity 0.598 W/(m K)
and specific heat capacity 4182 J/(kg K) (property-table values, common knowledge, recalled), which with the
spec's default water gives a Prandtl number of 7.0. :data:`AIR_20C` is the matching set for air (recalled).
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, model_serializer, model_validator

WATER_20C_THERMAL = {"conductivity": 0.598, "heat_capacity": 4182.0}  # W/(m K), J/(kg K)
AIR_20C = {"density": 1.204, "viscosity": 1.516e-5, "conductivity": 0.0257, "heat_capacity": 1005.0}
MIN_PRANDTL, MAX_PRANDTL = 1e-3, 1e5  # liquid metals to heavy oils (a project choice)
MIN_TEMPERATURE, MAX_TEMPERATURE = -273.15, 1e4  # °C
MAX_HEAT_FLUX = 1e9  # W/m²


class Thermal(BaseModel):
    """A surface's thermal condition: ``"insulated"``, ``{"temperature": °C}`` or ``{"heat_flux": W/m²}``.

    Examples
    --------
    >>> Thermal.model_validate("insulated").kind
    'insulated'
    >>> Thermal.model_validate({"temperature": 60}).model_dump()
    {'temperature': 60.0}
    """

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)

    temperature: float | None = Field(None, ge=MIN_TEMPERATURE, le=MAX_TEMPERATURE, description="°C")
    heat_flux: float | None = Field(None, ge=-MAX_HEAT_FLUX, le=MAX_HEAT_FLUX, description="W/m², into the fluid")

    @model_validator(mode="before")
    @classmethod
    def _word(cls, data: Any) -> Any:
        if data == "insulated":
            return {}
        if isinstance(data, str):
            raise ValueError('give "insulated", {"temperature": °C} or {"heat_flux": W/m²}')
        return data

    @model_validator(mode="after")
    def _one_of(self) -> Thermal:
        if self.temperature is not None and self.heat_flux is not None:
            raise ValueError("give either temperature or heat_flux, not both")
        return self

    @model_serializer(mode="plain")
    def _dump(self) -> str | dict[str, float]:
        if self.temperature is not None:
            return {"temperature": self.temperature}
        if self.heat_flux is not None:
            return {"heat_flux": self.heat_flux}
        return "insulated"

    @classmethod
    def __get_pydantic_json_schema__(cls, core_schema: Any, handler: Any) -> dict[str, Any]:
        # the word "insulated" is accepted as well as the object (see ``_word``)
        return {"anyOf": [{"type": "string", "enum": ["insulated"]}, handler(core_schema)]}

    @property
    def kind(self) -> Literal["insulated", "temperature", "heat_flux"]:
        if self.temperature is not None:
            return "temperature"
        return "heat_flux" if self.heat_flux is not None else "insulated"


class Heat(BaseModel):
    """Solve for the temperature: the fluid's thermal properties, the inflow temperature and the walls."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)

    prandtl: float | None = Field(None, ge=MIN_PRANDTL, le=MAX_PRANDTL, description="ν/κ; or conductivity + capacity")
    conductivity: float | None = Field(None, gt=0, le=1e4, description="W/(m K) (default: water at 20 °C)")
    heat_capacity: float | None = Field(None, gt=0, le=1e6, description="J/(kg K) (default: water at 20 °C)")
    inflow_temperature: float = Field(20.0, ge=MIN_TEMPERATURE, le=MAX_TEMPERATURE, description="°C")
    walls: Thermal = Thermal()

    @model_validator(mode="after")
    def _properties(self) -> Heat:
        """Water's properties when none are given; a wrong combination is :func:`check`'s to report, by field."""
        if self.prandtl is None and self.conductivity is None and self.heat_capacity is None:
            self.conductivity = WATER_20C_THERMAL["conductivity"]
            self.heat_capacity = WATER_20C_THERMAL["heat_capacity"]
        return self

    def diffusivity(self, viscosity: float, density: float) -> float:
        """Thermal diffusivity κ in m²/s, from the Prandtl number or from k / (ρ c)."""
        if self.prandtl is not None:
            return viscosity / self.prandtl
        return self.conductivity / (density * self.heat_capacity)  # type: ignore[operator]


def check(heat: Heat | None, bodies: list[Any], viscosity: float, density: float) -> list[tuple[str, str]]:
    """Cross-field rules: a body's thermal condition needs ``heat``; a heat flux needs the conductivity.

    Examples
    --------
    >>> check(Heat(prandtl=0.7, walls={"heat_flux": 10}), [], 1e-6, 1000.0)[0][0]
    'heat.walls.heat_flux'
    """
    problems: list[tuple[str, str]] = []
    if heat is not None and (pair := _property_problems(heat)):
        return pair
    if heat is None:
        for i, body in enumerate(bodies):
            if body.thermal is not None:
                problems.append((f"bodies.{i}.thermal", "a thermal condition needs a top-level heat section"))
        return problems
    surfaces = [("heat.walls", heat.walls)] + [(f"bodies.{i}.thermal", b.thermal) for i, b in enumerate(bodies)]
    for where, thermal in surfaces:
        if thermal is not None and thermal.heat_flux is not None and heat.conductivity is None:
            problems.append(
                (
                    f"{where}.heat_flux",
                    "a heat flux in W/m² needs heat.conductivity and heat.heat_capacity "
                    "(a Prandtl number alone does not give the conductivity)",
                )
            )
    prandtl = viscosity / heat.diffusivity(viscosity, density)
    if heat.prandtl is None and not MIN_PRANDTL <= prandtl <= MAX_PRANDTL:
        problems.append(
            (
                "heat.conductivity",
                f"the Prandtl number ν ρ c / k = {prandtl:.3g} is outside {MIN_PRANDTL:g} to {MAX_PRANDTL:g}",
            )
        )
    return problems


def _property_problems(heat: Heat) -> list[tuple[str, str]]:
    """The fluid's thermal properties come as a Prandtl number or as conductivity and heat capacity together."""
    given = (heat.conductivity is not None, heat.heat_capacity is not None)
    if heat.prandtl is not None and any(given):
        return [("heat.prandtl", "give either prandtl or conductivity and heat_capacity, not both")]
    if given == (True, False):
        return [("heat.heat_capacity", "needed with heat.conductivity (J/(kg K)); or give heat.prandtl alone")]
    if given == (False, True):
        return [("heat.conductivity", "needed with heat.heat_capacity (W/(m K)); or give heat.prandtl alone")]
    return []
