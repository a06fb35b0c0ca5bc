"""Reports: turning an analysis into text for people and documents for machines.

``content`` holds what every report says as plain text cells; ``terminal``
(rich), ``markdown``, ``csv``, ``html`` and ``json`` lay it out; ``formats``
picks one by name. ``dot`` draws the clock tree, ``plots`` the phase noise,
ppm over temperature and Monte Carlo figures, ``explain`` the waterfalls of one
consumer, ``progress`` the progress bar and ``screenshot`` a picture of a page.
See ``docs/reports.md``.
"""
