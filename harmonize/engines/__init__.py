"""The engines, in the order that breaks ties between equally good proposals.

Each module holds one kind of value and speaks the protocol in ``base``. The text
engine is the fallback: it wins only when no other engine claims the column.
"""

from __future__ import annotations

from harmonize.engines.base import Converted, Decision, Engine, GroupRule, Outcome
from harmonize.engines.booleans import BooleanEngine
from harmonize.engines.dates import DateEngine
from harmonize.engines.identifiers import IdentifierEngine
from harmonize.engines.numbers import NumberEngine
from harmonize.engines.phones import PhoneEngine
from harmonize.engines.text import TextEngine
from harmonize.engines.units import UnitEngine

# Units before numbers: bare numbers under a header naming a unit ("Weight (lb)") are
# quantities, and both engines read them equally well.
ENGINES: list[Engine] = [BooleanEngine(), DateEngine(), PhoneEngine(), IdentifierEngine(),
                         UnitEngine(), NumberEngine()]
FALLBACK: Engine = TextEngine()


def register(engine: Engine) -> None:
    ENGINES.append(engine)


def engine_named(name: str) -> Engine:
    for engine in [*ENGINES, FALLBACK]:
        if engine.name == name:
            return engine
    raise KeyError(name)


__all__ = ["ENGINES", "FALLBACK", "Converted", "Decision", "Engine", "GroupRule", "Outcome",
           "engine_named", "register"]
