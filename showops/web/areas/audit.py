"""The audit in the web app: the season's figures, deviations with one-step promotion
to a near miss, incident records with their classification, investigation,
corrective actions and attachments, and each night's show report.

Views read input, call ``store.audit`` and render; the figures are the same
:class:`~showops.audit.season.SeasonAudit` the PDF and the CSV files show. Anyone
signed in except a viewer may report; only an admin or a stage manager classifies,
investigates, sets actions and closes (the store checks this again).
"""

from __future__ import annotations

import csv
import io
import zipfile
from datetime import date, datetime, timezone

from flask import Blueprint, current_app, redirect, render_template, request, send_file, url_for
from markupsafe import Markup, escape

from showops.audit import records as rec
from showops.audit.deviations import RULES
from showops.audit.risk import LIKELIHOODS, MATRIX, MATRIX_EDITION, REGION_MEANING, SEVERITIES
from showops.errors import ShowopsError, ValidationError
from showops.store import audit as store
from showops.web import get_db, nav_item
from showops.web.auth import current_user, roles_required

bp = Blueprint("audit", __name__, url_prefix="/audit")


def _attachment_body_limit():
    # The app's body limit is sized for forms; an attachment may be larger, up to the
    # audit's own limit (the store checks it again, chunk by chunk). This must run
    # before the CSRF check reads the form, hence first in the app's list.
    if request.endpoint == "audit.attach":
        request.max_content_length = rec.ATTACHMENT_MAX_BYTES + 64 * 1024


@bp.record_once
def _install_body_limit(state) -> None:
    state.app.before_request_funcs.setdefault(None, []).insert(0, _attachment_body_limit)

READERS = ("admin", "stage_manager", "crew", "viewer")
REPORTERS = ("admin", "stage_manager", "crew")
MANAGERS = ("admin", "stage_manager")
OVERSIGHT = ("admin", "stage_manager", "viewer")

#: Region fills for the matrix (dark-theme versions of the PDF's own shading; the
#: region's name is written in every cell, so colour is never the only cue).
REGION_FILL = {"intolerable": "#6b2d2a", "tolerable": "#7a6230", "acceptable": "#2f4a3a"}


def _actor() -> store.Actor:
    user = current_user()
    return store.Actor(user.display_name, user.role, user_id=user.id, person_id=user.person_id)


def _period() -> tuple[date, date]:
    """The period asked for, or every performance's span (this year when there are none)."""
    db = get_db()
    low, high = db.execute("SELECT min(substr(starts_at, 1, 10)), max(substr(starts_at, 1, 10)) "
                           "FROM performance").fetchone()
    today = datetime.now(timezone.utc).date()
    default_from = date.fromisoformat(low) if low else date(today.year, 1, 1)
    default_to = date.fromisoformat(high) if high else today
    out = []
    for name, default in (("from", default_from), ("to", default_to)):
        text = request.args.get(name, "").strip()
        try:
            out.append(date.fromisoformat(text) if text else default)
        except ValueError:
            raise ValidationError(name, f"cannot read {text!r} as a date (give YYYY-MM-DD)") from None
    if out[1] < out[0]:
        raise ValidationError("to", f"{out[1]} is before {out[0]}")
    return out[0], out[1]


def trend_svg(season, width: int = 720, height: int = 200) -> Markup:
    """Deviations and records per performance as two lines (inline SVG, no script)."""
    points = season.trend
    if not points:
        return Markup('<p class="hint">No performances in this period.</p>')
    left, bottom, top, right = 36, 28, 12, 10
    w, h = width - left - right, height - top - bottom
    peak = max(max(d, r) for _, d, r in points) or 1
    n = len(points)

    def xy(i, v):
        x = left + (w * (i + 0.5) / n)
        return f"{x:.1f},{top + h - h * v / peak:.1f}"

    dev = " ".join(xy(i, d) for i, (_, d, _) in enumerate(points))
    recs = " ".join(xy(i, r) for i, (_, _, r) in enumerate(points))
    ticks = "".join(f'<text x="{left - 6}" y="{top + h - h * v / peak + 4:.1f}" text-anchor="end">{v}</text>'
                    for v in sorted({0, peak // 2, peak}))
    step = max(1, n // 8)
    labels = "".join(f'<text x="{left + w * (i + 0.5) / n:.1f}" y="{height - 8}" text-anchor="middle">'
                     f'{escape(name)}</text>' for i, name in enumerate(season.trend_labels) if i % step == 0)
    return Markup(
        f'<svg class="audit-chart" viewBox="0 0 {width} {height}" role="img" width="100%" '
        f'aria-label="Deviations and records per performance" font-size="11" fill="#9a9384">'
        f'<line x1="{left}" y1="{top + h}" x2="{left + w}" y2="{top + h}" stroke="#2b3037"/>{ticks}{labels}'
        f'<polyline points="{dev}" fill="none" stroke="#86b7cc" stroke-width="2"/>'
        f'<polyline points="{recs}" fill="none" stroke="#e8b04a" stroke-width="2" stroke-dasharray="5 3"/>'
        f'</svg>')


def matrix_svg(season, width: int = 720) -> Markup:
    """The 5x5 matrix with each record placed in its cell (inline SVG)."""
    label_w, head, cell_h = 190, 26, 52  # room for "1 Extremely improbable"
    cell_w = (width - label_w) / 5
    height = head + 5 * cell_h
    parts = [f'<svg class="audit-matrix" viewBox="0 0 {width} {height}" width="100%" role="img" '
             f'aria-label="Risk matrix with records placed" font-size="12" fill="#d6cfbf">']
    for j, (letter, (name, _)) in enumerate(SEVERITIES.items()):
        parts.append(f'<text x="{label_w + cell_w * (j + 0.5):.1f}" y="17" text-anchor="middle" '
                     f'font-weight="600">{letter} {name}</text>')
    for i, (lik, (name, _)) in enumerate(LIKELIHOODS.items()):
        y = head + i * cell_h
        parts.append(f'<text x="4" y="{y + cell_h / 2 + 4:.1f}" font-weight="600">{lik} {escape(name)}</text>')
        for j, letter in enumerate(SEVERITIES):
            cell = f"{lik}{letter}"
            region = MATRIX[cell]
            x = label_w + j * cell_w
            ids = season.matrix.get(cell, [])
            parts.append(f'<g data-cell="{cell}" data-count="{len(ids)}"><rect x="{x:.1f}" y="{y}" '
                         f'width="{cell_w - 2:.1f}" height="{cell_h - 2}" fill="{REGION_FILL[region]}"/>'
                         f'<text x="{x + 5:.1f}" y="{y + 14}" font-size="11">{cell} {region}</text>')
            if ids:
                parts.append(f'<text x="{x + cell_w / 2:.1f}" y="{y + 38}" text-anchor="middle" font-size="18" '
                             f'font-weight="700">{len(ids)}</text>')
            parts.append("</g>")
    parts.append("</svg>")
    return Markup("".join(parts))


@bp.route("/")
@nav_item("Audit", 60)
@roles_required(*OVERSIGHT)
def index():
    """The season: counts, trend, open and overdue actions, the risk matrix."""
    date_from, date_to = _period()
    season = store.season_audit(get_db(), date_from, date_to, with_margins=False)
    return render_template("audit/index.html", season=season, date_from=date_from, date_to=date_to,
                           trend=trend_svg(season), matrix=matrix_svg(season), rules=RULES, kinds=rec.KINDS,
                           edition=MATRIX_EDITION, region_meaning=REGION_MEANING)


@bp.route("/margins")
@roles_required(*OVERSIGHT)
def margins():
    """Each rig cue's load margin across the run (from each night's plan)."""
    date_from, date_to = _period()
    season = store.season_audit(get_db(), date_from, date_to, with_margins=True)
    perf = {p.id: p for p in season.performances}
    rows = sorted(season.margins, key=lambda m: -m.worst_usage)
    return render_template("audit/margins.html", rows=rows, perf=perf, date_from=date_from, date_to=date_to)


@bp.route("/season.pdf")
@roles_required(*OVERSIGHT)
def season_pdf():
    """The season audit PDF, the same as ``showops audit --out``."""
    from showops.sheets.audit import render_season_audit

    date_from, date_to = _period()
    season = store.season_audit(get_db(), date_from, date_to)
    out = io.BytesIO()
    render_season_audit(season, out, printed_at=datetime.now(timezone.utc).isoformat(timespec="seconds"))
    out.seek(0)
    return send_file(out, mimetype="application/pdf", download_name=f"audit-{date_from}-{date_to}.pdf")


@bp.route("/season-csv.zip")
@roles_required(*OVERSIGHT)
def season_csv():
    """The season's CSV files in one zip, the same as ``showops audit --csv``."""
    date_from, date_to = _period()
    season = store.season_audit(get_db(), date_from, date_to)
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zf:
        for stem, (header, rows) in season.csv_tables().items():
            text = io.StringIO()
            writer = csv.writer(text)
            writer.writerow(header)
            writer.writerows(rows)
            zf.writestr(f"{stem}.csv", text.getvalue())
    out.seek(0)
    return send_file(out, mimetype="application/zip", download_name=f"audit-{date_from}-{date_to}.zip")


@bp.route("/deviations")
@roles_required(*READERS)
def deviations():
    """Deviations found in the log, for one performance or all."""
    db = get_db()
    performance = request.args.get("performance", "").strip()
    ids = None
    if performance:
        from showops.store.show import find_performance

        ids = [find_performance(db, performance)]
    devs = store.find_deviations(db, ids)
    promoted = {k: i for k, i in db.execute("SELECT deviation_key, id FROM audit_record "
                                            "WHERE deviation_key IS NOT NULL")}
    limit = 500
    return render_template("audit/deviations.html", devs=devs[-limit:][::-1], total=len(devs), limit=limit,
                           promoted=promoted, performance=performance, rules=RULES,
                           can_promote=current_user().role in REPORTERS)


@bp.route("/deviations/promote", methods=["POST"])
@roles_required(*REPORTERS)
def promote():
    """Make a deviation a near miss in one action."""
    db = get_db()
    deviation = store.find_deviation(db, request.form.get("key", ""))
    record_id = store.promote(db, _actor(), deviation)
    return redirect(url_for("audit.record", record_id=record_id))


@bp.route("/records")
@roles_required(*READERS)
def records():
    """Every record, newest first."""
    return render_template("audit/records.html", rows=store.list_records(get_db()), kinds=rec.KINDS,
                           can_report=current_user().role in REPORTERS)


def _log_choices(db, performance_id: int) -> list[tuple[int, str]]:
    rows = db.execute("SELECT id, at_utc, event, person_name, step_key FROM step_log WHERE performance_id = ? "
                      "AND cue_id IS NOT NULL ORDER BY id", [performance_id]).fetchall()
    return [(i, f"#{i} {at[11:19]} {event} {who or ''} {step or ''}".strip()) for i, at, event, who, step in rows]


@bp.route("/records/new", methods=["GET", "POST"])
@roles_required(*REPORTERS)
def new_record():
    """Report an incident, near miss or unsafe condition (pick the log row it is about)."""
    db = get_db()
    form = request.form if request.method == "POST" else request.args
    performance = (form.get("performance_id") or "").strip()
    perf_id = int(performance) if performance.isdigit() else None
    performances = db.execute("SELECT id, starts_at FROM performance ORDER BY starts_at").fetchall()
    choices = _log_choices(db, perf_id) if perf_id else []
    message, status = None, 200
    if request.method == "POST":
        row = (form.get("step_log_id") or "").strip()
        try:
            record_id, warnings = store.report(db, _actor(), form.to_dict(), performance_id=perf_id,
                                               step_log_id=int(row) if row.isdigit() else None)
        except ShowopsError as exc:
            message, status = str(exc), exc.status
        else:
            return redirect(url_for("audit.record", record_id=record_id, warn=" ".join(warnings) or None))
    return render_template("audit/new.html", form=form, performances=performances, choices=choices,
                           perf_id=perf_id, kinds=rec.KINDS, treatments=rec.TREATMENTS, message=message), status


@bp.route("/records/<int:record_id>")
@roles_required(*READERS)
def record(record_id: int):
    """One record with its process, actions and attachments."""
    return _render_record(record_id)


def _render_record(record_id: int, message: str | None = None, status: int = 200):
    db = get_db()
    item = store.get_record(db, record_id)
    today = datetime.now(timezone.utc).date()
    overdue = {a["id"] for a in item["actions"] if rec.is_overdue(a["state"], date.fromisoformat(a["due"]), today)}
    return render_template("audit/record.html", r=item, message=message or request.args.get("warn"),
                           kinds=rec.KINDS, treatments=rec.TREATMENTS, controls=rec.CONTROLS, process=rec.PROCESS,
                           likelihoods=LIKELIHOODS, severities=SEVERITIES, overdue=overdue,
                           fields=store.INVESTIGATION_FIELDS, moves=rec.ACTION_MOVES,
                           manager=current_user().role in MANAGERS,
                           can_attach=current_user().role in REPORTERS,
                           attachment_max_mb=rec.ATTACHMENT_MAX_BYTES // 1048576), status


def _record_action(record_id: int, work):
    try:
        work()
    except ShowopsError as exc:
        return _render_record(record_id, str(exc), exc.status)
    return redirect(url_for("audit.record", record_id=record_id))


@bp.route("/records/<int:record_id>/classify", methods=["POST"])
@roles_required(*MANAGERS)
def classify(record_id: int):
    f = request.form
    return _record_action(record_id, lambda: store.classify(
        get_db(), _actor(), record_id, kind=f.get("kind", ""), likelihood=f.get("likelihood", ""),
        severity_actual=f.get("severity_actual", ""), severity_potential=f.get("severity_potential", "")))


@bp.route("/records/<int:record_id>/investigate", methods=["POST"])
@roles_required(*MANAGERS)
def investigate(record_id: int):
    findings = {k: request.form.get(k, "") for k in store.INVESTIGATION_FIELDS if k in request.form}
    return _record_action(record_id, lambda: store.investigate(get_db(), _actor(), record_id, findings))


@bp.route("/records/<int:record_id>/amend", methods=["POST"])
@roles_required(*REPORTERS)
def amend(record_id: int):
    changes = {k: request.form.get(k, "") for k in ("narrative", "doing", "object_involved", "immediate_action")
               if k in request.form}
    return _record_action(record_id, lambda: store.amend(get_db(), _actor(), record_id, changes))


@bp.route("/records/<int:record_id>/actions", methods=["POST"])
@roles_required(*MANAGERS)
def add_action(record_id: int):
    return _record_action(record_id, lambda: store.add_action(get_db(), _actor(), record_id,
                                                              request.form.to_dict()))


@bp.route("/records/<int:record_id>/actions/<int:action_id>", methods=["POST"])
@roles_required(*MANAGERS)
def move_action(record_id: int, action_id: int):
    return _record_action(record_id, lambda: store.move_action(get_db(), _actor(), action_id,
                                                               request.form.get("state", ""),
                                                               note=request.form.get("note", "")))


@bp.route("/records/<int:record_id>/close", methods=["POST"])
@roles_required(*MANAGERS)
def close(record_id: int):
    return _record_action(record_id, lambda: store.close(get_db(), _actor(), record_id))


@bp.route("/records/<int:record_id>/attachments", methods=["POST"])
@roles_required(*REPORTERS)
def attach(record_id: int):
    """Upload a photo or a PDF (type sniffed from the bytes, size limited)."""
    upload = request.files.get("file")
    if upload is None or not upload.filename:
        return _render_record(record_id, "attachment: choose a file", 400)
    return _record_action(record_id, lambda: store.add_attachment(
        get_db(), _actor(), current_app.config["INSTANCE"], record_id, upload.filename, upload.stream,
        upload.mimetype))


@bp.route("/attachments/<int:attachment_id>")
@roles_required(*READERS)
def attachment(attachment_id: int):
    """Serve an attachment to a signed-in user only (never from a public folder)."""
    path, media_type, name = store.attachment_file(get_db(), current_app.config["INSTANCE"], attachment_id)
    response = send_file(path, mimetype=media_type, download_name=name,
                         as_attachment=media_type == "application/pdf")
    response.headers["Cache-Control"] = "private, no-store"
    return response


@bp.route("/performances/<int:performance_id>/report")
@roles_required(*READERS)
def show_report(performance_id: int):
    """The night's show report."""
    return _render_show_report(performance_id)


def _render_show_report(performance_id: int, message: str | None = None, status: int = 200):
    report = store.show_report(get_db(), performance_id)
    cue_numbers = {c.cue.id: c.cue.number for c in report.running_order}
    return render_template("audit/show_report.html", r=report, rules=RULES, kinds=rec.KINDS, matrix=MATRIX,
                           cue_numbers=cue_numbers, message=message,
                           manager=current_user().role in MANAGERS), status


@bp.route("/performances/<int:performance_id>/report.pdf")
@roles_required(*READERS)
def show_report_pdf(performance_id: int):
    """The show report PDF, the same as ``showops report``."""
    from showops.sheets.report import render_show_report

    report = store.show_report(get_db(), performance_id)
    out = io.BytesIO()
    render_show_report(report, out, printed_at=datetime.now(timezone.utc).isoformat(timespec="seconds"))
    out.seek(0)
    return send_file(out, mimetype="application/pdf", download_name=f"show-report-{performance_id}.pdf")


@bp.route("/performances/<int:performance_id>/notes", methods=["POST"])
@roles_required(*MANAGERS)
def add_note(performance_id: int):
    try:
        store.add_note(get_db(), _actor(), performance_id, request.form.get("text", ""))
    except ShowopsError as exc:
        return _render_show_report(performance_id, str(exc), exc.status)
    return redirect(url_for("audit.show_report", performance_id=performance_id))


@bp.route("/performances")
@roles_required(*READERS)
def performances():
    """Performances with a log, each with its show report."""
    db = get_db()
    rows = db.execute("SELECT p.id, p.starts_at, (SELECT count(*) FROM step_log s WHERE s.performance_id = p.id "
                      "AND s.cue_id IS NOT NULL) FROM performance p ORDER BY p.starts_at").fetchall()
    return render_template("audit/performances.html", rows=rows)
