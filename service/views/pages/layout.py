"""The frame of every reviewer page: the report's look, a navigation bar, and the pages
for signing in and for errors."""

from __future__ import annotations

from urllib.parse import quote

from service.http.access import Caller
from service.views.report.html import Html, element, esc, join, link
from service.views.report.page import page

HOME = "/pages/"
SIGN_IN = "/pages/sign-in"
SIGN_OUT = "/pages/sign-out"


def series_href(key: str) -> str:
    """The page of a series."""
    return f"/pages/series/{quote(key, safe='/')}"


def run_href(run_id: int) -> str:
    """The page of a run: its report."""
    return f"/pages/runs/{run_id}"


def forecast_href(forecast_id: int) -> str:
    """The page of an issued forecast."""
    return f"/pages/forecasts/{forecast_id}"


def navigation(caller: Caller) -> Html:
    """The bar at the top of each page: home, who is signed in, and a sign-out button."""
    return Html(f'<nav class="site">{link(HOME, "Foldline: all series")}'
                f'<span class="who">signed in as {esc(caller.name)} ({esc(caller.role)})</span>'
                f'<form method="post" action="{SIGN_OUT}"><button type="submit">Sign out'
                "</button></form></nav>")


def reviewer_page(title: str, caller: Caller, body: Html) -> str:
    """A whole page for a signed-in reviewer."""
    return page(title, join([navigation(caller), element("h1", title), body]))


def with_navigation(report: str, caller: Caller) -> str:
    """A report document with the navigation bar at the top of its body."""
    return report.replace("<body>\n", f"<body>\n{navigation(caller)}\n", 1)


def sign_in_page(message: str | None = None) -> str:
    """The sign-in form; ``message`` says why the last attempt failed."""
    notice = element("p", message, cls="alert") if message else Html("")
    form = Html(f'<form class="sign-in" method="post" action="{SIGN_IN}">'
                '<label for="key">API key</label>'
                '<input id="key" name="key" type="password" autocomplete="current-password" '
                'required spellcheck="false">'
                '<button type="submit">Sign in</button></form>')
    about = element("p", "Sign in with the API key you were given (it starts with fl_). It is "
                         "sent once, in this form, and is not kept by the browser: a session "
                         "cookie stands in for it until you sign out or it expires.",
                    cls="note")
    return page("Foldline: sign in", join([element("h1", "Foldline: sign in"), notice, form,
                                           about]))


def error_page(status: int, title: str, detail: str) -> str:
    """A plain page for a failed request."""
    return page(f"Foldline: {title}", join([
        Html(f'<nav class="site">{link(HOME, "Foldline: all series")}</nav>'),
        element("h1", f"{status} {title}"), element("p", detail)]))
