"""One module per page. Each has ``PAGE`` (its Dash page registration: path, name,
order, title), ``layout(**kwargs)``, its callbacks beside the layout, and ``NAV_HREF``
when it appears in the navigation rail. ``PAGES`` is the navigation order."""

from dashboard.pages import alerts, baselines, overview, second_law, unit, uploads

PAGES = (overview, unit, second_law, alerts, baselines, uploads)
