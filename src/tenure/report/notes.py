"""The run id of an output set and the case's plausibility warnings, as a block of ``report.html``."""

from __future__ import annotations

from html import escape


def run_notes_html(run_id: str | None, warnings=()) -> str:
    """A ``<section id="run">`` naming the run id and listing each warning (empty when there is neither)."""
    if not run_id and not warnings:
        return ""
    out = ['<section id="run"><h2>This run</h2>']
    if run_id:
        out.append(f'<p class="money-note">Run id <code id="run-id">{escape(run_id)}</code>: the same id is in '
                   "plan.json, plan.xlsx and manifest.json of this folder.</p>")
    if warnings:
        out.append("<h3>Warnings about the case</h3><p>These inputs are allowed but are often mistakes; "
                   "the plan was drawn from them as given.</p><ul>")
        out += [f"<li><code>{escape(w.where)}</code>: {escape(w.message)}</li>" for w in warnings]
        out.append("</ul>")
    out.append("</section>")
    return "\n".join(out)
