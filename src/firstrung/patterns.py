"""Regular expressions compiled at their first use, not when their module is imported.

Every command imports many modules and uses few of their patterns; compiling them all at import cost
each command's start a few hundredths of a second. ``NAME = pattern(r"...")`` at module level, then
``NAME().match(text)`` where it is used (in a loop, take ``NAME().match`` once before it).
"""

from __future__ import annotations

import functools
import re
from collections.abc import Callable


def pattern(source: str, flags: int = 0) -> Callable[[], re.Pattern]:
    """A function giving ``re.compile(source, flags)``, compiled at its first call and kept.

    >>> digits = pattern(r"[0-9]+")
    >>> digits().fullmatch("2027") is not None, digits() is digits()
    (True, True)
    """
    return functools.cache(functools.partial(re.compile, source, flags))


#: Control characters a terminal would act on (C0 but tab and line feed, DEL, C1) and the Unicode line
#: and paragraph separators: shown as escapes on a terminal, dropped from a calendar.
CONTROL_CHARACTERS = pattern("[\x00-\x08\x0b-\x1f\x7f-\x9f\u2028\u2029]")

__all__ = ["CONTROL_CHARACTERS", "pattern"]
