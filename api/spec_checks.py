"""A job spec's checks before it is queued: the solver's own (``solver.load``, the geometry's too), NUL characters
and the service's size limits, with the normalised spec and its hash remembered for the specs that passed.

People send the same case again and again (a script's loop, a re-run, a team's shared example), and for a spec
the request body already parsed those checks (the mesher's dry run among them) and the hash cost about as much
as the rest of a creation. A refusal is not remembered: it is checked anew each time.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

from wakeyard import solver

from .problems import SpecProblems
from .submission import spec_hash
from .text_checks import NUL_MESSAGE, nul_fields

REMEMBERED = 256  # specs; each takes a few kB


@dataclass(frozen=True)
class Checked:
    """A spec that passed: the normalised spec as JSON (remembered for every request that sends the same one, so
    kept as text: no caller can change what the next one gets) and its hash (``api.submission.spec_hash``)."""

    text: str
    digest: str

    @property
    def spec(self) -> dict[str, Any]:
        """A fresh copy of the normalised spec, the caller's to change (about 20 µs for a few kB)."""
        return json.loads(self.text)


def validated(data: dict[str, Any] | solver.JobSpec, limits: solver.Limits) -> dict[str, Any]:
    """The normalised spec, or :class:`SpecProblems` with every problem found."""
    if nul := nul_fields(data.model_dump(mode="json") if isinstance(data, solver.JobSpec) else data):
        raise SpecProblems([(path, NUL_MESSAGE) for path in nul])
    try:
        spec = solver.load(data)
        solver.check_limits(spec, limits)
    except solver.SpecError as err:
        raise SpecProblems(err.problems) from None
    return spec.model_dump(mode="json")


def checked(spec: solver.JobSpec, limits: solver.Limits) -> Checked:
    """:func:`validated` and the hash of a spec the request body parsed, remembered by its JSON."""
    return _checked(_Keyed(spec.model_dump_json(), spec), limits)


@dataclass(frozen=True)
class _Keyed:
    """The parsed spec, hashed and compared by its JSON (the model itself is not hashable)."""

    key: str
    spec: solver.JobSpec = field(compare=False, hash=False)


@lru_cache(maxsize=REMEMBERED)
def _checked(keyed: _Keyed, limits: solver.Limits) -> Checked:
    spec = validated(keyed.spec, limits)
    return Checked(json.dumps(spec), spec_hash(spec))
