"""The service's routers, one per concern; each handler reaches the one state through `current_state`."""

from __future__ import annotations

from typing import Annotated

from fastapi import Depends, Request

from service.state import ServiceState

__all__ = ["current_state", "State"]


def current_state(request: Request) -> ServiceState:
    state: ServiceState = request.app.state.widen
    return state


#: A handler parameter that receives the service state.
State = Annotated[ServiceState, Depends(current_state)]
