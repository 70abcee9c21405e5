"""Callbacks declared beside their layouts, attached to each Dash app that is built.

Page modules declare callbacks with :func:`page_callback` (and browser-side ones with
:func:`clientside`) at import; :func:`attach` registers all of them on one app. Unlike
``dash.callback``, whose global list is consumed by the first app that serves a
request, this lets one process build several apps (the API test suite builds one per
test) and keeps every declared function a plain coroutine that tests call directly.

A callback that declares a keyword-only ``client`` parameter receives the app's
:class:`dashboard.client.LostworkClient`; Dash itself passes only the inputs and states.
"""

from __future__ import annotations

import functools
import inspect
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import dash


@dataclass(frozen=True)
class _Declared:
    function: Callable[..., Any]
    args: tuple[Any, ...]
    kwargs: dict[str, Any]


@dataclass(frozen=True)
class _Clientside:
    javascript: str
    args: tuple[Any, ...]
    kwargs: dict[str, Any]


_DECLARED: list[_Declared] = []
_CLIENTSIDE: list[_Clientside] = []


def page_callback(*args: Any, **kwargs: Any) -> Callable[[Callable[..., Any]], Callable[..., Any]]:
    """Declare a server callback; same arguments as ``dash.callback``.

    Returns the function unchanged, so it stays callable in tests.
    """

    def decorate(function: Callable[..., Any]) -> Callable[..., Any]:
        _DECLARED.append(_Declared(function, args, kwargs))
        return function

    return decorate


def clientside(javascript: str, *args: Any, **kwargs: Any) -> None:
    """Declare a browser-side callback; arguments as ``Dash.clientside_callback``."""
    _CLIENTSIDE.append(_Clientside(javascript, args, kwargs))


def _wants_client(function: Callable[..., Any]) -> bool:
    parameter = inspect.signature(function).parameters.get("client")
    return parameter is not None and parameter.kind is inspect.Parameter.KEYWORD_ONLY


def _bind(function: Callable[..., Any], client: Any) -> Callable[..., Any]:
    if inspect.iscoroutinefunction(function):

        @functools.wraps(function)
        async def bound_async(*args: Any) -> Any:
            return await function(*args, client=client)

        del bound_async.__wrapped__  # Dash must see the bound signature, not the original
        return bound_async

    @functools.wraps(function)
    def bound(*args: Any) -> Any:
        return function(*args, client=client)

    del bound.__wrapped__
    return bound


def attach(app: dash.Dash, client: Any) -> int:
    """Register every declared callback on ``app``; returns how many were attached."""
    for item in _DECLARED:
        function = _bind(item.function, client) if _wants_client(item.function) else item.function
        app.callback(*item.args, **item.kwargs)(function)
    for item in _CLIENTSIDE:
        app.clientside_callback(item.javascript, *item.args, **item.kwargs)
    return len(_DECLARED) + len(_CLIENTSIDE)
