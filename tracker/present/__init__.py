"""Service answers as rich text, tables and trees, for both front ends.

The CLI prints these renderables and the interface puts them in its widgets (a Textual
``Static``, ``Tree`` label or ``DataTable`` cell takes a rich ``Text``), so an item, a
batch or a result reads the same in both. Numbers are written by
``tracker.domain.precision`` and nowhere else; text from the database goes through
:func:`tracker.domain.text_rules.visible`. Colour never carries meaning alone.

Split by what is shown, so the interface loads only what a screen needs: ``text`` (the
house table, bars, confirmations), ``items`` (lineage and history), ``loans`` (overview,
reconcile, plans), ``lab`` (column batches, reductions, results, screening).
"""
