"""The join link of an open network: a new school registers and gets its own site link.

``GET  /j/<token>``  the join page: the school's name, position and gnomon
``POST /j/<token>``  form-encoded ``name``, ``latitude_deg``, ``longitude_deg``,
                     optional ``elevation_m`` and ``timezone``, the gnomon's height
                     (``value:gnomon_m`` with its unit ``column:gnomon_m``, one of
                     ``gnomon_m``, ``gnomon_cm``, ``gnomon_mm``), ``form_id`` and
                     ``csrf_token``: 201 with the school's own link (JSON:
                     ``joined``, ``site``, ``name``, ``link``, ``again``), or 4xx with
                     the field and why, nothing stored.

Like every form it carries an anti-forgery token; schools joined and join posts
are limited per address (:data:`firstrung.collect.app.JOIN_BURST`,
:data:`firstrung.collect.app.JOIN_TRY_BURST`), schools in number
(:data:`firstrung.collect.schools.MAX_SCHOOLS`). A form sent twice gives the
same school and link.
"""

from __future__ import annotations

import asyncio
import functools
from zoneinfo import available_timezones

from starlette.requests import Request
from starlette.routing import Route

from firstrung.collect.forms import clean
from firstrung.collect.schools import MAX_SCHOOLS, School, read_school
from firstrung.collect.tokens import form_token, form_token_ok, new_form_id
from firstrung.collect.web import answer, client_of, read_form

#: The join form's own fields (anything else is refused, naming it).
JOIN_FIELDS = ("name", "latitude_deg", "longitude_deg", "elevation_m", "timezone", "value:gnomon_m",
               "column:gnomon_m", "form_id", "csrf_token")


@functools.lru_cache(maxsize=1)
def zone_names() -> tuple[str, ...]:
    """The IANA zone names offered beside the time-zone field (the system's or tzdata's list)."""
    return tuple(sorted(z for z in available_timezones() if "/" in z and not z.startswith(("Etc/", "SystemV/"))))


def join_school(state, values: dict[str, str], form_id: str):
    """Register a school (in the writer's thread): (school, token, new) or (None, field, reason)."""
    for school_id, _, _, token, known_form, _ in state.store.schools():
        if known_form == form_id:  # the same form sent again: the same school
            return state.schools[school_id], token, False
    if len(state.schools) >= MAX_SCHOOLS:
        return None, "name", f"this network has {MAX_SCHOOLS} schools, as many as it takes; ask the coordinator"
    taken = {s.lower() for site in state.sites.values() for s in (site.id, site.name)}
    school_id, name, cells = read_school(values, state.campaign, taken, state.join_folder)
    if school_id is None:
        return None, name, cells
    row, _ = state.store.add_school(school_id, name, cells, form_id)
    school = School(row[0], row[1], row[2], row[5])
    state.know_school(school, row[3])
    return school, row[3], True


def join_routes(state, clock, not_found) -> list[Route]:
    """The join page's routes for a collection point's state (:class:`firstrung.collect.app.Collection`)."""
    from firstrung.safety import SOLAR_CAUTION_FULL

    def holds_join(request: Request) -> bool:
        found = state.book.holder(request.path_params["token"])
        return found is not None and found.role == "join"

    def page(request: Request, status: int = 200, result: dict | None = None, refill: dict | None = None):
        token = request.path_params["token"]
        now = clock()
        form_id = new_form_id()
        html = state.env.get_template("join.html.j2").render(
            campaign=state.campaign.name, form_id=form_id, csrf=form_token(state.key, token, form_id, now.timestamp()),
            zones=zone_names(), refill=refill or {}, result=result, caution=SOLAR_CAUTION_FULL,
            kinds=list(state.positional),
        )
        return answer(request, status, result or {}, html)

    async def join_get(request: Request):
        if not holds_join(request):
            return not_found(request)
        return await asyncio.to_thread(page, request)

    async def join_post(request: Request):
        if not holds_join(request):
            return not_found(request)
        token = request.path_params["token"]
        pairs, refusal = await read_form(request, max_fields=20)
        if refusal is not None:
            return refusal
        values: dict[str, str] = {}
        for name, value in pairs:
            if name not in JOIN_FIELDS:
                return answer(request, 422, {"joined": False, "field": name[:40], "reason": "not a field of the join form"})
            if name in values:
                return answer(request, 422, {"joined": False, "field": name, "reason": "given twice"})
            values[name] = clean(value)
        form_id = values.pop("form_id", "")
        if not form_token_ok(state.key, token, form_id, values.pop("csrf_token", ""), clock().timestamp()):
            return answer(request, 403, {"joined": False, "field": "csrf_token",
                                         "reason": "the form's token is missing, wrong or stale: reload the page "
                                                   "and send it again"})
        client = client_of(request)
        if not state.join_tries.take(client) or not state.joins.has(client):
            return answer(request, 429, {"joined": False, "field": None,
                                         "reason": "too many schools joined from this address at once; wait a minute"})
        loop = asyncio.get_running_loop()
        school, second, third = await loop.run_in_executor(state.writer, join_school, state, values, form_id)
        if school is not None and third:
            state.joins.take(client)  # a school stored
        if school is None:
            result = {"joined": False, "field": second, "reason": third}
            return await asyncio.to_thread(page, request, 422, result, values)
        link = f"{state.base_url(request)}/s/{second}"
        result = {"joined": True, "site": school.id, "name": school.name, "link": link, "again": not third}
        return await asyncio.to_thread(page, request, 201, result)

    return [Route("/j/{token}", join_get, methods=["GET", "HEAD"]), Route("/j/{token}", join_post, methods=["POST"])]
