"""The commands by name: the groups, the top-level commands and their one-line help.

Read by the help listing (``cli/app.py``), which lists every command without importing it, and by
the direct reading of a plain command line (``cli/direct.py``), which finds a command without typer.
"""

from __future__ import annotations

#: The groups whose sub-commands come from the methods' registry (firstrung.methods.REGISTRY):
#: group -> (its help, the registry entry's attribute naming the sub-command, and its help,
#: and the function of the method's ``commands`` module that adds it).
GROUPS = {
    "plan": ("Plan a campaign: dates and times that work at every site, predictions, calendars.",
             "plan_command", "plan_help", "register_plan"),
    "reduce": ("Reduce a campaign's logs to a result with its uncertainty.",
               "reduce_command", "reduce_help", "register_reduce"),
    "simulate": ("Write synthetic logs a campaign would produce, with its stated errors.",
                 "simulate_command", "simulate_help", "register_simulate"),
}
#: Commands at the top level, each in its own module of firstrung.cli defining ``register(app)``.
TOP_LEVEL = ["sheet", "ladder", "report", "check", "demo", "serve"]
#: The top-level names each TOP_LEVEL module registers, with their one-line help, so that
#: ``firstrung --help`` lists every command without importing any (a test keeps this true).
TOP_LEVEL_HELP = {
    "check": ("check", "Check every log of a campaign and name the rows that look wrong, with the fix to ask for."),
    "demo": ("demo", "Simulate an invented campaign's logs, check them, reduce every rung, chain the ladder, write the report."),
    "ladder": ("ladder", "Earth's radius -> the Moon's distance -> the Sun's distance -> the sizes of Moon and Sun."),
    "report": ("report", "Write the campaign report: the ladder, each rung's data, fits and error budget, data quality, cautions."),
    "serve": ("serve", "Collect readings on line: a form per log for each site's link, the check's verdict at once."),
    "sheet": ("sheet", "A printable noon-shadow field sheet (one page) for one site and day, with the times to read."),
    "blank-sheets": ("sheet", "Blank field sheets (HTML) and CSV log templates for shadows, eclipse and half-moon work."),
}

__all__ = ["GROUPS", "TOP_LEVEL", "TOP_LEVEL_HELP"]
