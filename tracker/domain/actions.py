"""Ledger actions in words, for people.

The ledger records each event under a stable action name (``powder.drilled``); that name is
part of what is hashed and signed, so it never changes. Screens, the CLI's history and the
lender's report show these words instead.
"""

from __future__ import annotations

ACTION_WORDS: dict[str, str] = {
    "ledger.opened": "ledger opened",
    "operator.added": "operator added",
    "operator.deactivated": "operator deactivated",
    "operator.login_bound": "database login bound to operator",
    "operator.role_changed": "operator's role changed",
    "key.registered": "signing key registered",
    "key.revoked": "signing key revoked",
    "location.added": "location added",
    "lender.added": "lender added",
    "loan.added": "loan logged",
    "loan.amended": "loan terms amended",
    "loan.document_attached": "document attached to loan",
    "loan.curve_set": "strontium age curve chosen for loan",
    "loan.returned": "loan marked returned",
    "loan.closed": "loan closed",
    "manifest.imported": "lender's specimen list imported",
    "manifest_mapping.saved": "specimen-list mapping saved",
    "specimen.added": "specimen listed",
    "specimen.checked_in": "specimen checked in",
    "specimen.photographed": "specimen photographed",
    "specimen.returned": "specimen returned",
    "shipment.added": "shipment recorded",
    "item.moved": "moved",
    "powder.drilled": "powder drilled",
    "powder.corrected": "powder weighing corrected",
    "solution.dissolved": "powder dissolved",
    "solution.corrected": "solution corrected",
    "concentration.recorded": "concentration measured",
    "concentration.corrected": "concentration corrected",
    "aliquot.taken": "aliquot taken",
    "batch.created": "column batch created",
    "batch.position_added": "column loaded in batch",
    "batch.position_removed": "column removed from batch (scanned by mistake)",
    "batch.sheet_entered": "column sheet entered",
    "batch.blank_delta_set": "procedural blank's delta set",
    "cut.recorded": "cut recovered",
    "cut.corrected": "cut recovery corrected",
    "material.added": "material added",
    "reference_material.added": "reference material added",
    "reference.value_set": "reference value set",
    "profile.saved": "instrument export profile saved",
    "session.imported": "instrument session imported",
    "session.reduced": "instrument session reduced",
    "session.row_matched": "instrument row matched by hand",
    "session.rows_matched": "instrument rows matched by catalogue number",
    "curve.added": "strontium age curve added",
    "labels.queued": "labels queued",
    "labels.printed": "labels printed",
    "labels.reprinted": "labels reprinted",
    "labels.cancelled": "labels cancelled",
    "labels.uri_prefix_set": "label link prefix set",
    "report.generated": "return report written",
    "settings.backdating_window_set": "backdating window set",
    "settings.recovery_window_set": "dissolution recovery window set",
    "database.restored": "database restored from a backup",
}


def action_words(action: str) -> str:
    """An action as people read it; an action this version does not know (written by a
    newer tracker) is spelled out from its name rather than hidden."""
    known = ACTION_WORDS.get(action)
    if known is not None:
        return known
    subject, _, verb = action.partition(".")
    return f"{subject.replace('_', ' ')} {verb.replace('_', ' ')}".strip()
