"""How the line centre is found, and the shift of that centre from the volume mean (finite cylinders).

Placeholder until the line-shape computation lands.
"""

from __future__ import annotations

from ._base import Built, Component, Context


def _build(ctx: Context) -> Built | None:
    return None


COMPONENT = Component(name="detection", section="line", order=95, group="line", title="`line`: detection",
                      summary="how the line centre is found", keys=(), build=_build)
