"""The collection point as an ASGI application (Starlette).

Routes (the design's section 3, "Collecting readings on line"):

``GET  /s/<token>``                 a site's page: a form per collected kind of log, its readings so far
``POST /s/<token>``                 a reading (form-encoded: ``kind``, the log's columns): 201 stored with
                                    the check's verdict, 4xx refused with the field and why (nothing stored)
``GET  /c/<token>``                 the coordinator's page: every site's readings, flags, withdraw buttons
``GET  /c/<token>/logs/<kind>.csv`` every reading of a kind (withdrawn ones left out), as a log firstrung reads
``GET  /c/<token>/readings.csv``    every reading ever stored, withdrawn ones marked
``GET  /c/<token>/check.json``      the check of the downloaded logs, as ``firstrung check --json`` gives flags
``POST /c/<token>/withdraw``        mark a reading withdrawn (kept, never deleted)
``GET  /j/<token>``                 an open network's join page (:mod:`firstrung.collect.join`)
``POST /j/<token>``                 a school joins: 201 with its own site link, 4xx refused naming the field

An unknown token gets 404 and stores nothing; repeated unknown tokens from one
client get 429. Answers are JSON when the request accepts ``application/json``.
"""

from __future__ import annotations

import asyncio
import csv
import datetime as dt
import io
import json
import shutil
import tempfile
from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace
from pathlib import Path
from urllib.parse import parse_qsl

from markupsafe import Markup
from starlette.applications import Starlette
from starlette.requests import Request
from starlette.responses import PlainTextResponse, Response
from starlette.routing import Route

from firstrung.bounded import Bounded
from firstrung.collect import forms as form_fields
from firstrung.collect.export import formula_safe, log_csv
from firstrung.collect.kinds import LogKind, log_kind
from firstrung.collect.schools import School, serving_campaign
from firstrung.collect.store import Store
from firstrung.collect.tokens import Holder, TokenBook, form_token, form_token_ok, new_form_id
from firstrung.collect.verdict import CheckProcess, Judge, Submission
from firstrung.collect.web import (
    BODY_LIMIT_BYTES,
    SECURITY_HEADERS,
    Buckets,
    read_body,
    read_form,
    wants_json,
)
from firstrung.collect.web import answer as _answer
from firstrung.collect.web import client_of as _client

#: Posts per link: a burst of this many, then one every RATE_REFILL_S seconds (a site sends a reading a minute).
RATE_BURST = 30
RATE_REFILL_S = 2.0
#: Unknown tokens per client: a burst, then one every BAD_TOKEN_REFILL_S (guessing a 256-bit token is hopeless anyway).
BAD_TOKEN_BURST = 20
BAD_TOKEN_REFILL_S = 5.0
#: Schools joined per address: a burst (a workshop of teachers on one network), then one every JOIN_REFILL_S seconds.
JOIN_BURST = 20
JOIN_REFILL_S = 30.0
#: Join posts per address, refused ones included: a burst, then one every JOIN_TRY_REFILL_S seconds.
JOIN_TRY_BURST = 120
JOIN_TRY_REFILL_S = 1.0
#: Forms' fields kept rendered (per kind, form, zone and minute); the oldest dropped first.
FIELDS_KEPT = 512
#: Sites' forms kept rendered (per site, minute and kind shown, some kB each); the oldest dropped first.
FORMS_KEPT = 1_024
#: Where a form's id and anti-forgery token go in the forms kept rendered: tags no escaped text can hold,
#: replaced in every page by the form's own.
FORM_ID_MARK = "<form-id-{}>"
CSRF_MARK = "<form-token-{}>"
#: Readings' rows of the sites' pages kept rendered (a few hundred bytes each); the oldest dropped first.
ROWS_KEPT = 100_000


def _environment():
    from jinja2 import Environment, PackageLoader, StrictUndefined, select_autoescape

    return Environment(
        loader=PackageLoader("firstrung.collect", "templates"),
        autoescape=select_autoescape(default=True, default_for_string=True),
        undefined=StrictUndefined,
        auto_reload=False,  # the package's templates change only with a new version, which needs a restart
    )


class Collection:
    """The state of one running collection point: campaign, kinds, store, tokens, the writer and its queue."""

    def __init__(self, campaign_path, store_path, kinds: tuple[str, ...], join: bool = False,
                 public_base: str | None = None) -> None:
        self.campaign = serving_campaign(campaign_path)
        self.kinds: dict[str, LogKind] = {k: log_kind(k) for k in kinds}
        #: The kinds whose rows may carry their own site (open networks): the only ones a school sends.
        self.positional = {k: v for k, v in self.kinds.items() if v.slot_of("latitude_deg") is not None}
        self.store = Store(store_path)
        self.key = self.store.secret()
        self.coordinator_token, self.site_tokens = self.store.links(self.campaign.site_ids)
        self.book = TokenBook(self.coordinator_token, self.site_tokens)
        self.public_base = public_base.rstrip("/") if public_base else None
        self.join_token = self.store.join_token() if join and self.positional else None
        if self.join_token is not None:
            self.book.add(self.join_token, Holder("join", None))
        self.sites = {s.id: s for s in self.campaign.sites}
        self.judge = Judge(self.campaign)
        #: The checks, in a process of their own once the server starts (two cores or more).
        self.checks = CheckProcess(self.judge, tuple(self.kinds))
        self.schools: dict[str, School] = {}
        self.school_tokens: dict[str, str] = {}
        for school_id, name, cells, token, _, joined in self.store.schools():
            self.know_school(School(school_id, name, cells, joined), token)
        self.joins = Buckets(JOIN_BURST, JOIN_REFILL_S)
        self.join_tries = Buckets(JOIN_TRY_BURST, JOIN_TRY_REFILL_S)
        self.join_folder = Path(tempfile.mkdtemp(prefix="firstrung-join-"))
        self.writer = ThreadPoolExecutor(max_workers=1, thread_name_prefix="store-writer")
        self.queue: asyncio.Queue | None = None
        self.env = _environment()
        self.post_limits = Buckets(RATE_BURST, RATE_REFILL_S)
        self.bad_tokens = Buckets(BAD_TOKEN_BURST, BAD_TOKEN_REFILL_S)
        self._check_cache: tuple[tuple, dict] | None = None
        self._forms: dict = {}
        #: (kind, site) -> (id, cells) of its readings not withdrawn, in order; the writer's thread's alone.
        self._cells: dict[tuple[str, str], list[tuple[int, dict[str, str]]]] = {}
        self._fields_html: dict = Bounded(FIELDS_KEPT)
        self._forms_html: dict = Bounded(FORMS_KEPT)
        #: reading id -> (withdrawn_utc or "", its row in the site's page)
        self._rows_html: dict[int, tuple[str, str]] = Bounded(ROWS_KEPT)

    # --- schools of an open network ----------------------------------------------------------------

    def know_school(self, school: School, token: str) -> None:
        """Serve a school that joined: its link, its page, its readings checked at its own position."""
        site = school.site()
        self.schools[school.id] = school
        self.school_tokens[school.id] = token
        self.sites[school.id] = site
        self.book.add(token, Holder("site", school.id))
        self.judge.zones[school.id] = site.timezone
        self.judge.campaign = replace(self.judge.campaign, sites=self.judge.campaign.sites + (site,))

    def forms_of(self, kind: str, zone: str | None):
        """The ways of recording a reading of a kind and their fields, for a site's zone (the same every time)."""
        key = (kind, zone)
        found = self._forms.get(key)
        if found is None:
            found = self._forms[key] = form_fields.forms(self.kinds[kind], zone)
        return found

    def fields_html(self, kind: str, way: int, zone: str | None, id_prefix: str, now_local: str, refill: dict):
        """The fields of one form of a site's page, as HTML (escaped by its own template, shown as it is by the
        page's); kept per zone and minute when nothing is refilled."""
        key = (kind, way, zone, id_prefix, now_local)
        if not refill and key in self._fields_html:
            return self._fields_html[key]
        html = self.env.get_template("site_fields.html.j2").render(
            w={"fields": self.forms_of(kind, zone)[way][1], "id_prefix": id_prefix}, refill_here=refill,
            now_local=now_local)
        if not refill:
            self._fields_html[key] = html
        return html

    def site_forms(self, site, now_local: str, refill: dict | None, kind_shown: str | None) -> tuple[str, int]:
        """The forms of a site's page as HTML, with :data:`FORM_ID_MARK` and :data:`CSRF_MARK` (numbered from 0)
        where each form's id and anti-forgery token go, and how many forms; kept per site, minute and kind
        shown when nothing is refilled (the page's tokens are new every time, its forms the same)."""
        key = (site.id, now_local, kind_shown)
        if not refill and key in self._forms_html:
            return self._forms_html[key]
        date = now_local[:10]
        kinds = []
        count = 0
        for name in self.kinds_of(site.id):
            ways = []
            refill_here = (refill or {}) if kind_shown == name else {}
            for k, (form, _) in enumerate(self.forms_of(name, site.timezone)):
                id_prefix = name if k == 0 else f"{name}-{form.key}"
                ways.append({
                    "id_prefix": id_prefix,
                    "title": form.title if form is not None else "",
                    "fields_html": self.fields_html(name, k, site.timezone, id_prefix, now_local, refill_here),
                    "hints": form_fields.hints(name, site, date, form.key if form is not None else None),
                    "form_id": Markup(FORM_ID_MARK.format(count)),
                    "csrf": Markup(CSRF_MARK.format(count)),
                    "sent": form is not None and kind_shown == name and any(
                        (refill or {}).get(key) for n in form.needs for key in (n, f"value:{n}")),
                })
                count += 1
            if not any(w["sent"] for w in ways):
                ways[0]["sent"] = True  # the first form open unless another was just sent
            kinds.append({
                "name": name,
                "forms": ways,
                "caution": form_fields.caution(name),
                "open": kind_shown == name or (kind_shown is None and len(kinds) == 0),
            })
        found = self.env.get_template("site_forms.html.j2").render(kinds=kinds), count
        if not refill:
            self._forms_html[key] = found
        return found

    def reading_rows(self, site_id: str, count: int) -> list[str]:
        """A site's last ``count`` readings as its page's table rows (HTML, escaped by their template), the
        newest first; each row is rendered once and again only when its reading is withdrawn."""
        keys = self.store.recent_keys(site_id, count)
        missing = [i for i, withdrawn in keys if self._rows_html.get(i, (None, ""))[0] != (withdrawn or "")]
        fresh = {}
        if missing:
            template = self.env.get_template("site_reading.html.j2")
            for i, r in self.store.by_ids(missing).items():
                self._rows_html[i] = fresh[i] = (r.withdrawn_utc or "", template.render(r=r))
        rows = [fresh.get(i) or self._rows_html.get(i) for i, _ in keys]
        return [row[1] for row in rows if row is not None]

    def kinds_of(self, site_id: str) -> dict[str, LogKind]:
        """The kinds of log a site sends: every collected kind, or for a school those that carry a position."""
        return self.positional if site_id in self.schools else self.kinds

    def base_url(self, request: Request) -> str:
        """Where the links start: ``--public-url`` (or the address bound), else as the request came."""
        return self.public_base or str(request.base_url).rstrip("/")

    # --- the writer: batches of submissions, read, checked and stored in one thread ----------------

    async def start(self) -> None:
        self.checks.start()
        self.queue = asyncio.Queue()
        self._task = asyncio.create_task(self._drain())
        loop = asyncio.get_running_loop()
        await loop.run_in_executor(self.writer, self._warm_up)

    async def stop(self) -> None:
        self._task.cancel()
        self.close()

    def close(self) -> None:
        """The writer, the check process and the store closed, and the passing files' folders removed."""
        self.writer.shutdown(wait=True)
        self.checks.stop()
        self.store.close()
        shutil.rmtree(self.join_folder, ignore_errors=True)
        shutil.rmtree(self.judge.folder, ignore_errors=True)  # the checks' passing files, none left

    def _warm_up(self) -> None:
        """Load the ephemeris and each check once, and today's noon at every site (in one vectorised call)
        with the predictions each form shows, so that the first page and the first reading are answered fast."""
        now = dt.datetime.now(dt.UTC)
        try:
            form_fields.prepare_today(self.sites.values(), now)
        except Exception:  # a date past the ephemeris: each page says what it can
            pass
        for site in list(self.sites.values()):
            date = form_fields.local_now(site.timezone, now)[:10]
            for name in self.kinds_of(site.id):
                for form, _ in self.forms_of(name, site.timezone):
                    form_fields.hints(name, site, date, form.key if form is not None else None)
        for kind in self.kinds.values():
            try:
                kind.log_flags(self.campaign, kind.read(self.campaign, []))
            except Exception:
                pass
        self.checks.wait_ready()

    async def submit(self, sub: Submission):
        future = asyncio.get_running_loop().create_future()
        await self.queue.put((sub, future))
        return await future

    async def _drain(self) -> None:
        loop = asyncio.get_running_loop()
        while True:
            batch = [await self.queue.get()]
            while not self.queue.empty():
                batch.append(self.queue.get_nowait())
            try:
                results = await loop.run_in_executor(self.writer, self._process, [s for s, _ in batch])
            except Exception as error:  # never leave a client waiting
                for _, future in batch:
                    if not future.done():
                        future.set_exception(error)
                continue
            for (_, future), result in zip(batch, results, strict=True):
                if not future.done():
                    future.set_result(result)

    def _process(self, subs: list[Submission]):
        """(outcome, stored reading or None) of each submission: a form already stored is answered from the store."""
        results: list = [None] * len(subs)
        first_of: dict[tuple[str, str], int] = {}
        fresh: list[int] = []
        known = self.store.known_forms((sub.site, sub.form_id) for sub in subs)
        for i, sub in enumerate(subs):
            key = (sub.site, sub.form_id)
            if key in known:
                results[i] = ("again", known[key])
            elif key in first_of:
                results[i] = ("same", first_of[key])
            else:
                first_of[key] = i
                fresh.append(i)
        to_store = []
        for kind_name in dict.fromkeys(subs[i].kind for i in fresh):
            members = [i for i in fresh if subs[i].kind == kind_name]
            kind = self.kinds[kind_name]
            sites = list(dict.fromkeys(subs[i].site for i in members))
            stored = self._stored_cells(kind_name, sites)
            try:
                outcomes = self.checks.judge(kind, [subs[i] for i in members], stored)
            except Exception as error:  # a reading is never lost to a failing check
                from firstrung.collect.verdict import Outcome

                outcomes = [Outcome(False, flags=[{"code": "check-failed", "severity": "warning",
                                                   "message": f"the check could not run: {type(error).__name__}",
                                                   "fix": "the coordinator runs firstrung check on the downloaded log"}])
                            for _ in members]
            for i, outcome in zip(members, outcomes, strict=True):
                results[i] = ("new", outcome)
                if not outcome.refused:
                    to_store.append(i)
        stored_rows = self.store.add([(subs[i].kind, subs[i].site, subs[i].cells, subs[i].form_id,
                                       results[i][1].verdict()) for i in to_store])
        reading_of = dict(zip(to_store, stored_rows, strict=True))
        for r in stored_rows:
            kept = self._cells.get((r.kind, r.site))
            if kept is not None and (not kept or kept[-1][0] < r.id):  # a form sent again is there already
                kept.append((r.id, r.cells))
        out = []
        for i, (how, value) in enumerate(results):
            if how == "again":
                out.append((None, value))
            elif how == "same":
                j = value
                out.append((results[j][1], reading_of.get(j)))
            else:
                out.append((value, reading_of.get(i)))
        return out

    def _stored_cells(self, kind: str, sites) -> dict[str, list[dict[str, str]]]:
        """Each site's readings of a kind not withdrawn (their cells, in order), read from the store once and
        then kept: the writer adds each reading it stores, and a withdrawal drops its site's."""
        missing = [s for s in sites if (kind, s) not in self._cells]
        if missing:
            for site in missing:
                self._cells[(kind, site)] = []
            for r in self.store.readings(kind, missing, include_withdrawn=False):
                self._cells[(kind, r.site)].append((r.id, r.cells))
        return {s: [cells for _, cells in self._cells[(kind, s)]] for s in sites}

    def withdraw(self, reading_id: int, reason: str):
        """Mark a reading withdrawn (in the writer's thread, like every write): the store's reading or None."""
        reading = self.store.withdraw(reading_id, reason)
        if reading is not None:
            self._cells.pop((reading.kind, reading.site), None)
        return reading

    # --- the full check of what is stored, as the coordinator downloads it -------------------------

    def export(self, kind: str):
        """The stored readings of a kind and their log file (a school's rows: its name and its position)."""
        readings = self.store.readings(kind, include_withdrawn=False)
        schools = self.schools
        rows = [(schools[r.site].name, schools[r.site].row_cells(r.cells)) if r.site in schools else (r.site, r.cells)
                for r in readings]
        zones = {**self.judge.zones, **{s.name: self.judge.zones[s.id] for s in schools.values()}}
        return readings, log_csv(self.kinds[kind].slots, rows, zones)

    def full_check(self) -> dict:
        """Per kind: the exported readings and the flags ``check`` gives on the downloaded logs (cached)."""
        everything = self.store.readings()
        stamp = (len(everything), max((r.id for r in everything), default=0), sum(r.withdrawn for r in everything))
        if self._check_cache is not None and self._check_cache[0] == stamp:
            return self._check_cache[1]
        out = {}
        with tempfile.TemporaryDirectory(prefix="firstrung-check-") as folder:
            logs = {}
            exported = {}
            for kind in self.kinds:
                readings, text = self.export(kind)
                if readings:
                    path = Path(folder) / f"{kind}.csv"
                    path.write_text(text, encoding="utf-8")
                    logs[kind] = (path,)
                exported[kind] = readings
            from firstrung.open_sites import with_row_sites

            campaign = with_row_sites(replace(self.campaign, path=Path(folder) / "campaign.toml", row_problems=(),
                                              logs={**{k: () for k in self.campaign.logs}, **logs}))
            for kind, readings in exported.items():
                flags = list(self.kinds[kind].check_campaign(campaign).flags) if readings else []
                out[kind] = (readings, flags)
        self._check_cache = (stamp, out)
        return out


# --- pages ---------------------------------------------------------------------------------------


def create_app(campaign_path, store_path, kinds: tuple[str, ...], now=None, join: bool = False,
               public_base: str | None = None) -> Starlette:
    """The collection point's application for one campaign.

    ``now()`` gives the current time (aware), for the forms' default time; the clock by default.
    ``join``: serve the join link of an open network (when a collected kind carries positions).
    ``public_base``: the address the links start with (``--public-url``, or the one bound).
    """
    state = Collection(campaign_path, store_path, kinds, join=join, public_base=public_base)
    clock = now or (lambda: dt.datetime.now(dt.UTC))

    def not_found(request: Request) -> Response:
        if not state.bad_tokens.take(_client(request)):
            return _answer(request, 429, {"error": "too many requests with unknown links; wait a minute"})
        return _answer(request, 404, {"error": "no such page"})

    def holder(request: Request, role: str):
        found = state.book.holder(request.path_params["token"])
        return found if found is not None and found.role == role else None

    def site_page(request, site_id: str, status: int = 200, result: dict | None = None,
                  refill: dict | None = None, kind_shown: str | None = None) -> Response:
        site = state.sites[site_id]
        token = request.path_params["token"]
        now = clock()
        forms_html, count = state.site_forms(site, form_fields.local_now(site.timezone, now), refill, kind_shown)
        issued = now.timestamp()
        for k in range(count):  # each form its own id and anti-forgery token, in the marks left for them
            form_id = new_form_id()
            forms_html = forms_html.replace(FORM_ID_MARK.format(k), form_id, 1).replace(
                CSRF_MARK.format(k), form_token(state.key, token, form_id, issued), 1)
        html = state.env.get_template("site.html.j2").render(
            campaign=state.campaign.name, site=site, result=result, forms_html=forms_html,
            readings=state.reading_rows(site_id, 30),
        )
        return _answer(request, status, result or {}, html)

    # A site's page is rendered on the event loop (about half a millisecond: its forms' fields are kept
    # rendered, its last readings one indexed query); a thread would add its hand-over to the work, and
    # gain nothing under one interpreter lock. The checks run in the writer's thread, the coordinator's
    # page (a full check) in a thread of its own.

    async def site_get(request: Request) -> Response:
        found = holder(request, "site")
        if found is None:
            return not_found(request)
        return site_page(request, found.site)

    async def site_post(request: Request) -> Response:
        found = holder(request, "site")
        if found is None:
            return not_found(request)
        site_id = found.site
        token = request.path_params["token"]

        def refuse(status, field, reason, refill=None, kind=None):
            result = {"stored": False, "field": field, "reason": reason}
            return site_page(request, site_id, status, result, refill, kind)

        pairs, refusal = await read_form(request)
        if refusal is not None:
            return refusal
        meta = {k: v for k, v in pairs if k in ("kind", "form_id", "csrf_token", "site")}
        rest = [(k, v) for k, v in pairs if k not in ("kind", "form_id", "csrf_token", "site")]
        form_id = meta.get("form_id", "")
        if not form_token_ok(state.key, token, form_id, meta.get("csrf_token", ""), clock().timestamp()):
            return _answer(request, 403, {"stored": False, "field": "csrf_token",
                                          "reason": "the form's token is missing, wrong or stale: reload the page "
                                                    "and send the reading again"})
        if not state.post_limits.take(token):
            return _answer(request, 429, {"stored": False, "field": None,
                                          "reason": "too many readings at once from this link; wait a minute"})
        kind_name = meta.get("kind", "")
        refill = dict(rest)
        if kind_name not in state.kinds_of(site_id):
            return refuse(422, "kind", f"expected a kind of log this link sends ({', '.join(state.kinds_of(site_id))})",
                          refill)
        if meta.get("site", site_id) != site_id:
            return refuse(422, "site", f"this link is for site {site_id}", refill, kind_name)
        cells, problem = form_fields.cells_from_form(state.kinds[kind_name], rest)
        if problem is not None:
            return refuse(422, problem[0], problem[1], refill, kind_name)
        outcome, reading = await state.submit(Submission(kind_name, site_id, cells, form_id))
        if reading is None:
            return refuse(422, outcome.field, outcome.reason, refill, kind_name)
        verdict = reading.verdict
        result = {"stored": True, "id": reading.id, "kind": kind_name, "site": site_id,
                  "looks_right": verdict.get("looks_right", True), "flags": verdict.get("flags", []),
                  "again": outcome is None}
        return site_page(request, site_id, 201, result, None, kind_name)

    def coordinator_page(request: Request, note: str | None = None) -> Response:
        token = request.path_params["token"]
        try:
            checked = state.full_check()
        except Exception as error:  # the page and its downloads stay usable; the check says why it could not run
            checked = {}
            note = (note + " " if note else "") + (f"The check of the stored logs could not run "
                                                   f"({type(error).__name__}); run firstrung check on the downloads.")
        flags_of: dict[int, list] = {}
        for readings, flags in checked.values():
            for f in flags:
                if f.row is not None and 1 <= f.row <= len(readings):
                    flags_of.setdefault(readings[f.row - 1].id, []).append(f)
        everything = state.store.readings()
        sites, joined = dict(state.sites), list(state.schools.values())  # a school may join meanwhile
        by_site: dict[str, list] = {s: [] for s in sites}
        for r in everything:
            by_site.setdefault(r.site, []).append(r)
        form_id = new_form_id()
        root = state.base_url(request)
        schools = [{"school": school, "link": f"{root}/s/{state.school_tokens[school.id]}",
                    "readings": len(by_site.get(school.id, ()))} for school in joined]
        html = state.env.get_template("coordinator.html.j2").render(
            campaign=state.campaign.name, by_site=by_site, flags_of=flags_of, kinds=list(state.kinds),
            sites=sites, csrf=form_token(state.key, token, form_id, clock().timestamp()), form_id=form_id,
            base=f"{root}/c/{token}", note=note, total=len(everything), withdrawn=sum(r.withdrawn for r in everything),
            flagged=len(flags_of), schools=schools,
            join=None if state.join_token is None else f"{root}/j/{state.join_token}",
        )
        return _answer(request, 200, {"readings": len(everything), "schools": [s.id for s in joined]}, html)

    async def coordinator_get(request: Request) -> Response:
        if holder(request, "coordinator") is None:
            return not_found(request)
        return await asyncio.to_thread(coordinator_page, request)

    async def log_download(request: Request) -> Response:
        if holder(request, "coordinator") is None:
            return not_found(request)
        kind = request.path_params["kind"]
        if kind not in state.kinds:
            return _answer(request, 404, {"error": f"this campaign collects {', '.join(state.kinds)}"})
        _, text = await asyncio.to_thread(state.export, kind)
        response = PlainTextResponse(text, media_type="text/csv; charset=utf-8")
        response.headers.update(SECURITY_HEADERS)
        response.headers["Content-Disposition"] = f'attachment; filename="{kind}.csv"'
        return response

    async def readings_download(request: Request) -> Response:
        if holder(request, "coordinator") is None:
            return not_found(request)
        everything = await asyncio.to_thread(state.store.readings)
        buffer = io.StringIO()
        writer = csv.writer(buffer, lineterminator="\n")
        writer.writerow(["id", "kind", "site", "received_utc", "withdrawn_utc", "withdrawn_reason", "cells", "flags"])
        for r in everything:
            writer.writerow([r.id, r.kind, r.site, r.received_utc, r.withdrawn_utc or "",
                             formula_safe(r.withdrawn_reason or ""), formula_safe(json.dumps(r.cells, ensure_ascii=False)),
                             ";".join(f["code"] for f in r.verdict.get("flags", []))])
        response = PlainTextResponse(buffer.getvalue(), media_type="text/csv; charset=utf-8")
        response.headers.update(SECURITY_HEADERS)
        response.headers["Content-Disposition"] = 'attachment; filename="readings.csv"'
        return response

    async def check_download(request: Request) -> Response:
        if holder(request, "coordinator") is None:
            return not_found(request)
        from firstrung.app.check_json import flag_to_json

        checked = await asyncio.to_thread(state.full_check)
        data = {"campaign": state.campaign.name, "checked": list(state.kinds),
                "flags": [flag_to_json(f) for _, flags in checked.values() for f in flags]}
        return _answer(request, 200, data)

    async def withdraw(request: Request) -> Response:
        if holder(request, "coordinator") is None:
            return not_found(request)
        token = request.path_params["token"]
        body = await read_body(request)
        if body is None:
            return _answer(request, 413, {"error": f"the request is larger than {BODY_LIMIT_BYTES} bytes"})
        values = dict(parse_qsl(body.decode("utf-8", "replace"), keep_blank_values=True, max_num_fields=10))
        if not form_token_ok(state.key, token, values.get("form_id", ""), values.get("csrf_token", ""),
                             clock().timestamp()):
            return _answer(request, 403, {"error": "the form's token is missing, wrong or stale: reload the page"})
        reading_id = values.get("reading", "")
        if not reading_id.isdigit():
            return _answer(request, 422, {"error": "expected a reading number", "field": "reading"})
        reason = form_fields.clean(values.get("reason", ""))[:200] or "withdrawn by the coordinator"
        loop = asyncio.get_running_loop()
        reading = await loop.run_in_executor(state.writer, state.withdraw, int(reading_id), reason)
        if reading is None:
            return _answer(request, 404, {"error": f"no reading {reading_id}", "field": "reading"})
        note = f"Reading {reading.id} ({reading.site}) is withdrawn: kept in the store, left out of the logs."
        if wants_json(request):
            return _answer(request, 200, {"withdrawn": reading.id, "withdrawn_utc": reading.withdrawn_utc})
        return await asyncio.to_thread(coordinator_page, request, note)

    async def nothing(request: Request) -> Response:
        return not_found(request)

    async def lifespan(app):
        await state.start()
        app.state.collection = state
        yield
        await state.stop()

    from contextlib import asynccontextmanager

    from firstrung.collect.join import join_routes

    routes = [
        *join_routes(state, clock, not_found),
        Route("/s/{token}", site_get, methods=["GET", "HEAD"]),
        Route("/s/{token}", site_post, methods=["POST"]),
        Route("/c/{token}", coordinator_get, methods=["GET", "HEAD"]),
        Route("/c/{token}/logs/{kind}.csv", log_download, methods=["GET"]),
        Route("/c/{token}/readings.csv", readings_download, methods=["GET"]),
        Route("/c/{token}/check.json", check_download, methods=["GET"]),
        Route("/c/{token}/withdraw", withdraw, methods=["POST"]),
        Route("/{rest:path}", nothing, methods=["GET", "POST", "HEAD"]),
    ]
    app = Starlette(routes=routes, lifespan=asynccontextmanager(lifespan))
    app.state.collection = state
    return app
