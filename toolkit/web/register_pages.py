"""Pages of the guided balancing run and of the register: jobs, their check runs, sign-offs and status, the
work-order files and the certificate, rotor types.

Every change is a POST with the session's CSRF token and needs a signed-in person whose role may do it
(:data:`toolkit.web.accounts.MAY`); what is recorded carries that person's name and the time. Files are
served from the output folder only, and only files the register lists for that job.
"""

from __future__ import annotations

import datetime as _dt
import functools
from pathlib import Path

from toolkit.web import run as RUN


def routes(*, reg, render, form_of, need_user, out: Path, refused, headers=None):
    from starlette.concurrency import run_in_threadpool
    from starlette.responses import FileResponse, RedirectResponse, Response
    from starlette.routing import Route

    from toolkit.errors import CounterpoiseError
    from toolkit.register import records as R

    def _types() -> list[str]:
        """The stored rotor types' names, as ``list_types`` lists them, without its per-type counts: the run's
        form needs the names only, and the counting query cost more than the form's computation."""
        with reg.read() as conn:
            return [row[0] for row in conn.execute(_type_names())]

    def _template_of(values):
        name = str(values.get("type", "") or "").strip()
        if not name:
            return None
        try:
            return R._loads(R.template(reg, name)["template"], name)
        except CounterpoiseError:
            return None

    from toolkit.web.planner import Batches

    batches = Batches()

    # -- planner batches ------------------------------------------------------------------------------

    async def planner_page(request):
        user = need_user(request, "plan")
        if request.method == "GET":
            return render(request, "planner.html", batch=None)
        form = await form_of(request)
        upload = form.get("sheet")
        paper = str(form.get("paper", "")) or None
        if paper not in (None, "A4", "Letter"):
            paper = None
        if upload is None or isinstance(upload, str) or not upload.filename:
            return render(request, "planner.html", 422, batch=None, error="choose a planner sheet (.csv or .xlsx)")
        data = await upload.read()
        try:
            batch = await run_in_threadpool(batches.start, user["name"], upload.filename, data, paper)
        except CounterpoiseError as exc:
            return render(request, "planner.html", 422, batch=None, error=str(exc))
        return RedirectResponse(f"/planner/{batch.ident}", status_code=303)

    def _batch(request):
        user = need_user(request, "plan")
        batch = batches.get(request.path_params["ident"], user["name"])
        if batch is None:
            raise refused(404, "no such batch")
        return batch

    async def batch_page(request):
        batch = _batch(request)
        return render(request, "planner.html", batch=batch, state=batch.state())

    async def batch_state(request):
        from starlette.responses import JSONResponse

        return JSONResponse(_batch(request).state())

    async def batch_zip(request):
        batch = _batch(request)
        if not batch.state()["finished"]:
            raise refused(409, "the batch is still running")
        data = await run_in_threadpool(batches.zip_bytes, batch)
        return Response(data, media_type="application/zip",
                        headers={"content-disposition": 'attachment; filename="work-orders.zip"'})

    # -- the guided run -------------------------------------------------------------------------------

    async def run_page(request):
        need_user(request)
        if request.method == "GET":
            values = RUN.example_values()
            return render(request, "run.html", **_context(values, "rotor", {}, None, None))
        form = await form_of(request)
        values = {f.name: str(form.get(f.name, "")) for f in RUN.FIELDS}
        step = str(form.get("step", "rotor"))
        step = step if step in RUN.STEPS else "rotor"
        go = str(form.get("go", "next"))
        at = RUN.STEPS.index(step)
        if go == "back":
            target = RUN.STEPS[max(0, at - 1)]
        elif go.startswith("to:") and go[3:] in RUN.STEPS:
            target = go[3:]
        elif go == "record":
            target = "record"
        else:
            target = RUN.STEPS[min(len(RUN.STEPS) - 1, at + 1)]
        # the work order, the diagrams and the stored types' names in one call of a worker thread
        text, order, errors, version_id, context = await run_in_threadpool(_step, values, target, go)
        if context is None:  # recording a complete run
            user = need_user(request, "record")
            number = await run_in_threadpool(_record, values, text, order, version_id, user)
            return RedirectResponse(f"/jobs/{_quote(number)}", status_code=303)
        return render(request, "run.html", 422 if errors else 200, **context)

    def _step(values, target, go):
        """The step ``target`` of the run: ``(job text, order, errors, type version, page context)``; the
        context is None when a complete run is to be recorded. A problem sends the run back to the first
        step with a problem, the message beside its field."""
        text = order = version_id = None
        errors: dict = {}
        if RUN.STEPS.index(target) >= RUN.STEPS.index("corrections"):
            text, order, errors, version_id = RUN.preview(values, reg)
            if errors:
                steps = [RUN.BY_NAME[k].step for k in errors if k in RUN.BY_NAME]
                target = min(steps, key=RUN.STEPS.index) if steps else "runs"
            elif go == "record":
                return text, order, errors, version_id, None
        return text, order, errors, version_id, _context(values, target, errors, order, text)

    def _record(values, text, order, version_id, user) -> str:
        from toolkit.export.files import write_order
        from toolkit.workorder.job import parse_job

        job = parse_job(text, "the balancing run")
        recorded, rec = R.store_order(reg, order, text, dict(job.order), type_version_id=version_id,
                                      by=user["name"])
        files = write_order(recorded, str(out), ("pdf", "xlsx"), force=False)
        R.add_files(reg, rec["order_number"], files)
        return rec["order_number"]

    def _context(values, step, errors, order, text):
        from toolkit.web import diagrams

        template = _template_of(values)
        planes = RUN.plane_names(values, template)
        live, skipped = diagrams.live_svg(values, order, planes) if step in ("runs", "corrections") else (None, [])
        return {"values": values, "step": step, "errors": errors, "order": order, "job_text": text,
                "fields": RUN.FIELDS, "steps": RUN.STEPS, "titles": RUN.STEP_TITLES, "types": _types(),
                "planes": planes, "rotor_template": template, "live_svg": live, "not_drawn": skipped,
                "plane_svgs": diagrams.plane_svgs(order) if order is not None and step in ("corrections", "record")
                else []}

    def _diagram(values):
        from toolkit.web import diagrams

        template = _template_of(values)
        _text, order, _errors, _v = RUN.preview(values, reg)
        svg, skipped = diagrams.live_svg(values, order, RUN.plane_names(values, template))
        if skipped:
            svg += '<p class="hint">Not drawn (not yet AMOUNT UNIT@ANGLE): ' + ", ".join(
                _escape(s) for s in skipped) + "</p>"
        if order is None:
            svg += '<p class="hint">Corrections are drawn once every step is complete and valid.</p>'
        return svg

    async def run_diagram(request):
        """The live polar diagram of the fields in the query (the page's script asks for it while typing);
        it changes nothing, so a GET."""
        need_user(request)
        values = {f.name: str(request.query_params.get(f.name, ""))[:2000] for f in RUN.FIELDS}
        body = await run_in_threadpool(_diagram, values)
        return Response(body, media_type="text/html; charset=utf-8", headers=headers)

    # -- jobs -----------------------------------------------------------------------------------------

    async def jobs_page(request):
        need_user(request)
        status = request.query_params.get("status") or None
        if status is not None and status not in R.STATUSES:
            status = None
        rows = await run_in_threadpool(R.list_jobs, reg, status=status, limit=200)
        return render(request, "jobs.html", jobs=rows, status=status, statuses=R.STATUSES)

    def _detail(number: str) -> dict:
        try:
            return R.job_detail(reg, number)
        except CounterpoiseError:
            raise refused(404, f"no job {number[:60]!r} in the register") from None

    async def job_page(request):
        need_user(request)
        number = request.path_params["number"]
        d = await run_in_threadpool(_detail, number)
        return render(request, "job.html", job=d, transitions=R.TRANSITIONS.get(d["status"], ()),
                      files=[Path(f["path"]).name for f in d["files"]], message=request.query_params.get("done"))

    async def job_check(request):
        form = await form_of(request)
        user = need_user(request, "check")
        number = request.path_params["number"]
        d = await run_in_threadpool(_detail, number)
        residuals = {p["name"]: str(form.get(f"res{n}", "")).strip() for n, p in enumerate(d["workorder"]["planes"])}
        residuals = {k: v for k, v in residuals.items() if v}
        return await _change(request, number, d, R.record_check, reg, number, residuals=residuals,
                             by=user["name"], source="browser")

    async def job_sign(request):
        await form_of(request)
        user = need_user(request, "sign")
        number = request.path_params["number"]
        d = await run_in_threadpool(_detail, number)
        at = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
        return await _change(request, number, d, R.record_signoff, reg, number, user["role"], user["name"],
                             signed=at, source="browser")

    async def job_status(request):
        form = await form_of(request)
        status = str(form.get("status", ""))
        user = need_user(request, "release" if status == "released" else "check")
        number = request.path_params["number"]
        d = await run_in_threadpool(_detail, number)
        return await _change(request, number, d, R.set_status, reg, number, status, by=user["name"],
                             note=str(form.get("note", ""))[:500], source="browser")

    async def _change(request, number, d, function, *args, **kwargs):
        try:
            await run_in_threadpool(function, *args, **kwargs)
        except CounterpoiseError as exc:
            return render(request, "job.html", 422, job=d, transitions=R.TRANSITIONS.get(d["status"], ()),
                          files=[Path(f["path"]).name for f in d["files"]], error=str(exc))
        return RedirectResponse(f"/jobs/{_quote(number)}?done=recorded", status_code=303)

    # -- trim runs (the guided run's last step, against a recorded job) --------------------------------

    def _trim_context(d, values, result=None, errors=None, store=False):
        from toolkit.web import trim as TRIM

        try:
            b = TRIM.basis(d, reg)
        except CounterpoiseError as exc:
            raise refused(409, f"job {d['order_number']}: no trim run can start from it here: {exc}") from None
        from toolkit.web.diagrams import trim_svg

        values = values if values is not None else b["values"]
        return {"job": d, "basis": b, "values": values, "result": result, "svg": trim_svg(d, b, values, result),
                "errors": errors or {}, "trim_fields": TRIM.TRIM_FIELDS, "titles": RUN.STEP_TITLES,
                "steps": RUN.STEPS, "offer": TRIM.store_offer(d, b, reg), "store": store}

    async def trim_page(request):
        """A trim run of a recorded job: compute (anyone who may compute), record (who may enter a check run);
        every field comes back with the page, so nothing typed is lost. Recording a coefficient trim of a job
        whose rotor type has stored coefficients may also store the trim's updated coefficients as the type's
        next set (the box ``store_coefficients``, off unless ticked; the same role as recording)."""
        from toolkit.web import trim as TRIM

        number = request.path_params["number"]
        key = "trim:" + number[:80]  # what was typed last for this job's next trim, kept in the session
        if request.method == "GET":
            need_user(request)
            d = await run_in_threadpool(_detail, number)
            draft = request.session.get(key)
            kept = draft["values"] if isinstance(draft, dict) and draft.get("step") == len(d["trims"]) + 1 else None
            return render(request, "trim.html", **await run_in_threadpool(_trim_context, d, kept))
        form = await form_of(request)
        go = str(form.get("go", "compute"))
        store = str(form.get("store_coefficients", "")) == "on"
        user = need_user(request, "check" if go == "record" else None)
        d = await run_in_threadpool(_detail, number)
        values = {name: str(form.get(name, ""))[:4000] for name, _l, _h in TRIM.TRIM_FIELDS}
        if sum(map(len, values.values())) <= 1500:  # a session cookie stays small; a longer draft is not kept
            request.session[key] = {"step": len(d["trims"]) + 1, "values": values}
        result, errors = await run_in_threadpool(TRIM.compute, d, values, reg)
        if errors or go != "record":
            return render(request, "trim.html", 422 if errors else 200,
                          **await run_in_threadpool(_trim_context, d, values, result, errors, store))
        try:
            await run_in_threadpool(_record_trim, d, result, store, user)
        except CounterpoiseError as exc:
            return render(request, "trim.html", 422, **await run_in_threadpool(
                _trim_context, d, values, result, {"": str(exc)}, store))
        request.session.pop(key, None)
        return RedirectResponse(f"/jobs/{_quote(number)}?done=trim", status_code=303)

    def _record_trim(d, result, store, user):
        """The trim as a new row; with ``store``, its updated coefficients as a new set of the job's type in
        the same transaction, when that is offered (refused in words when it is not)."""
        from toolkit.errors import BadInput
        from toolkit.web import trim as TRIM

        coefficients = parent = None
        if store:
            offer = TRIM.store_offer(d, TRIM.basis(d, reg), reg)
            if not (offer and offer["offered"]):
                raise BadInput("the trim's coefficients cannot be stored as a rotor type's set: "
                               + (offer["why"] if offer else "a machine trim has no influence coefficients"))
            coefficients, parent = TRIM.updated_coefficients(result), offer["parent"]
        return R.record_trim(reg, d["order_number"], result["kind"], result, by=user["name"], source="browser",
                             coefficients=coefficients, parent_id=parent)

    async def job_file(request):
        need_user(request)
        number, name = request.path_params["number"], request.path_params["name"]
        d = await run_in_threadpool(_detail, number)
        for f in d["files"]:
            path = Path(f["path"]).resolve()
            if path.name == name and path.parent == out and path.is_file():
                kind = ("application/pdf" if path.suffix == ".pdf" else
                        "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet")
                return FileResponse(path, media_type=kind, filename=path.name)
        raise refused(404, f"no file {name[:80]!r} recorded for job {number[:60]!r}")

    async def certificate(request):
        need_user(request)
        number = request.path_params["number"]
        from toolkit.export.certificate import certificate_pdf
        from toolkit.register.reports import certificate_data

        try:
            data = await run_in_threadpool(certificate_data, reg, number)
        except CounterpoiseError as exc:
            raise refused(409, str(exc)) from None
        pdf = await run_in_threadpool(certificate_pdf, data)
        from toolkit.fileio import safe_filename

        return Response(pdf, media_type="application/pdf", headers={
            "content-disposition": f'attachment; filename="{safe_filename(number)}-certificate.pdf"'})

    # -- series statistics ----------------------------------------------------------------------------

    _STATS_FIELDS = ("type", "since", "until", "status")

    def _stats(query) -> tuple[dict, dict | None, dict]:
        """The selection typed (kept as typed), the statistics, and problems by field."""
        from toolkit.register.reports import series_statistics

        chosen = {k: str(query.get(k, "") or "").strip()[:200] for k in _STATS_FIELDS}
        try:
            stats = series_statistics(reg, type_name=chosen["type"] or None, status=chosen["status"] or None,
                                      since=chosen["since"] or None, until=chosen["until"] or None)
        except CounterpoiseError as exc:
            field = exc.parameter if exc.parameter in ("since", "until", "status") else "type"
            return chosen, None, {field: str(exc)}
        return chosen, stats, {}

    def _stats_page(query) -> dict:
        from toolkit.web import charts

        chosen, stats, errors = _stats(query)
        figures = []
        if stats is not None:
            for p in stats["planes"]:
                points = [(pt["g_mm"], pt["deg"]) for pt in p["scatter"]]
                allowance = p["allowance_max_g_mm"]
                figures.append({
                    "plane": p,
                    "scatter": charts.chart_svg(charts.scatter_layout(plane=p["plane"], points=points,
                                                                      allowance_g_mm=allowance),
                                                f"Plane {p['plane']}: as found, polar"),
                    "histogram": charts.chart_svg(charts.histogram_layout(
                        plane=p["plane"], counts=p["histogram"]["counts"],
                        bin_width_g_mm=p["histogram"]["bin_width_g_mm"], allowance_g_mm=allowance),
                        f"Plane {p['plane']}: as found, histogram")})
        trend = (charts.chart_svg(charts.trend_layout(months=stats["trend"]), "As found per month")
                 if stats is not None and stats["trend"] else None)
        from urllib.parse import urlencode

        return {"chosen": chosen, "stats": stats, "errors": errors, "figures": figures, "trend": trend,
                "types": _types(), "statuses": R.STATUSES,
                "query": urlencode({k: v for k, v in chosen.items() if v})}

    async def stats_page(request):
        need_user(request)
        context = await run_in_threadpool(_stats_page, request.query_params)
        return render(request, "stats.html", 422 if context["errors"] else 200, **context)

    async def stats_file(request):
        need_user(request)
        kind = request.path_params["kind"]
        from toolkit.export.statistics import stats_pdf, stats_xlsx

        maker, media = {"pdf": (stats_pdf, "application/pdf"),
                        "xlsx": (stats_xlsx, "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet")
                        }.get(kind, (None, None))
        if maker is None:
            raise refused(404, "the statistics come as pdf or xlsx")
        _chosen, stats, errors = await run_in_threadpool(_stats, request.query_params)
        if errors:
            raise refused(422, " ".join(errors.values()))
        data = await run_in_threadpool(maker, stats)
        return Response(data, media_type=media, headers={
            "content-disposition": f'attachment; filename="register-statistics.{kind}"'})

    async def types_page(request):
        need_user(request)
        rows = await run_in_threadpool(R.list_types, reg)
        return render(request, "types.html", types=rows)

    return [
        Route("/run", run_page, methods=["GET", "POST"]),
        Route("/run/diagram", run_diagram),
        Route("/jobs", jobs_page),
        Route("/jobs/{number}", job_page),
        Route("/jobs/{number}/check", job_check, methods=["POST"]),
        Route("/jobs/{number}/sign", job_sign, methods=["POST"]),
        Route("/jobs/{number}/status", job_status, methods=["POST"]),
        Route("/jobs/{number}/trim", trim_page, methods=["GET", "POST"]),
        Route("/jobs/{number}/files/{name}", job_file),
        Route("/jobs/{number}/certificate.pdf", certificate),
        Route("/types", types_page),
        Route("/stats", stats_page),
        Route("/stats/register-statistics.{kind}", stats_file),
        Route("/planner", planner_page, methods=["GET", "POST"]),
        Route("/planner/{ident}", batch_page),
        Route("/planner/{ident}/state", batch_state),
        Route("/planner/{ident}/orders.zip", batch_zip),
    ]


@functools.lru_cache(maxsize=1)
def _type_names():
    """The statement (built once; SQLAlchemy statements are immutable) naming every type that has a version."""
    from sqlalchemy import select

    from toolkit.register.schema import rotor_types, type_versions

    return (select(rotor_types.c.name).where(rotor_types.c.id.in_(select(type_versions.c.type_id)))
            .order_by(rotor_types.c.name))


def _escape(text: str) -> str:
    from html import escape

    return escape(text, quote=True)


def _quote(text: str) -> str:
    from urllib.parse import quote

    return quote(text, safe="")
