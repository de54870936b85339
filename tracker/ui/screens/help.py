"""Help: the keys, and a walk through every task on the demo database."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import Footer, Markdown

from tracker.ui.widgets.operator_bar import OperatorBar

HELP = """\
# tracker — help

**Scanning.** Point the scanner at any label, anywhere: tracker jumps to the item. When an ID
field is focused (a form, the batch builder, the label queue) the scan fills that field
instead. IDs may be typed too, in any case, with or without hyphens. A misread ID (wrong
check character) shows a ✗ line and asks for a re-scan.

**Typing.** With no field focused, one key alone is its shortcut; two or more in a row are
text, and Enter finds it: an ID, a specimen's catalogue number (`KFMNH P 20311` on the demo),
a loan's reference or a location's name. Shortcuts never fire while you type.

**Keys everywhere** — F1 help · F2 loans · F3 column batches · F4 instrument sessions ·
F5 labels · F6 ledger · Ctrl+O switch operator · Ctrl+P all actions (command palette) ·
Esc back · Ctrl+Q quit. Bench forms: **c** check in · **d** drill · **s** dissolve ·
**k** concentration · **a** aliquot · **m** move. In a form, **Ctrl+S** saves. Number keys
open a screen's tabs. Corrections, returning or disposing of vials, shipments, amending,
returning and closing a loan: Ctrl+P. An override, printing the whole queue, reprinting and
closing a loan are asked first (**y** yes, **n** no). A form opened with Ctrl+P on an item
or a loan has it filled in where it fits.

Status is always written in words and symbols: ✓ ok/pass · ⚠ warning · ✗ refused, over a
limit or failed · ↩ powder to return · ? results or recovery missing.

**Signing.** Every event is signed with its operator's own key. When you choose who you are,
tracker asks once for your key's passphrase; after a while without a key press (15 minutes,
or `TRACKER_LOCK_AFTER` seconds) the key is locked and the passphrase asked again. The demo's
passphrase is `demo passphrase, invented`.

## Walk-through on the demo database

1. **Check in a specimen by scanning.** Press **c**. Scan the specimen's label (on the demo:
   type `SP-00011-S` quickly, or type it and press Enter). Type its condition, scan or type a
   location (`LC-00006-B` is *Loan box A*), press **Ctrl+S**. Its lineage opens; its label is
   queued.
2. **Drill within the allowance.** Press **d**, scan `SP-00010-U`. Type the tare
   (`1200.000 mg`) and gross: the allowance under the form updates as you type. A gross of
   `1201.500 mg` is over the per-specimen and loan limits: **Ctrl+S** is refused and says
   by how much. Change the gross to `1200.500 mg` and save: ✓.
   Only a manager (★ in the top right) may give an override reason.
3. **Build a column batch.** Press **F3**, then **Ctrl+N** to open a batch (name, resin,
   scheme), Ctrl+S. Scan aliquots onto columns (`AQ-00002-D` on the demo): the scan field
   keeps the focus, so scan one after another. **Ctrl+B** adds a procedural blank, **Ctrl+R**
   a reference material. Move to a column and press **Ctrl+E** (or Enter) to enter the
   recovered element: yields and blank shares are flagged against the batch's limits.
   Scanned the wrong aliquot? Move to its column and press **Ctrl+D**: type why, Ctrl+S,
   then **y**. Only a column with no cut collected comes off; it stays on record as removed
   with your reason, its slot takes the next column you add, its aliquot is available again.
4. **Import and reduce a session.** Press **F4**, then **i**. Give the export's path, a saved
   profile (`mc-ca` on the demo), a name, the instrument, element and bracketing standard,
   Ctrl+S. The session opens: unmatched rows are listed with why; press **r** to reduce —
   results with 2SD and n, reference materials ✓ pass or ✗ FAIL, and the standard's drift
   plotted on its own tab. Rows typed at the instrument by name (`IS-00003-6` on the demo):
   on the Unmatched tab (**2**) press **n** to match the rows named by a specimen's
   catalogue number, or **m** on a row to scan or type its cut (`CU-00004-F`, or the
   catalogue number `KFMNH P 20313`); then **r** reduces again.
   **l** (or Ctrl+P, *Reference material control chart*) shows a reference material's
   record across sessions: choose the material, ratio and scale (**v** opens the chooser;
   on the demo, *SRM 915b*); each session's mean ± 2SD, the other sessions' limits (their
   mean ± 2SD), a strip `·····[··●··]·····` of where it fell, and *within* or *OUTSIDE*
   once there are 3 other sessions to judge it by — as `tracker reference chart` prints it.
5. **Print labels.** Press **F5**. Choose the stock, the first free position, **v** draws the
   sheet; **space** chooses labels, **p** prints the chosen ones (or, asked first, the whole
   queue) to a PDF (and to a printer if you name one); **x** cancels labels with a reason.
   **R** reprints the chosen or highlighted labels with a reason, asked first (or Ctrl+P,
   *Reprint labels*, scanning each item); the queue stays as it is.
6. **Return report.** On a loan (F2, Enter), **R** opens the return report: every
   specimen's account, the flags and the ledger head; **Ctrl+S** writes it (PDF, CSV, XLSX
   or JSON) with its anchor file, signed by a manager's key and recorded in the ledger first.
7. **The ledger.** Press **F6**: filter by action, operator or item; **v** verifies every
   hash and signature and shows the head hash to give the lender; **e** exports the ledger
   and **h** writes its signed head (an anchor) to a new file.

## On a loan (F2, Enter)
Enter opens a specimen · **c** check in · **d** drill the selected specimen · **p** plan what
each specimen still needs · **R** return report · **I** manifest import · tabs (**1 2 3 4
5**): specimens with consumption bars, terms with amendments and overrides, plan, results,
Sr screening.
**p** asks for the plan's options on one screen, every one `tracker plan` takes: µg per
analysis, replicates, element, expected yield, material, tissue, safety margin, the share
kept for concentration, the smallest powder worth drilling. An empty field takes the value
shown beside its label; Ctrl+S shows the plan on the Plan tab; p again keeps what you typed.

**Results** (**4**): each specimen's results, value ± 2SD and n, on the scale each session
measured on. **v** opens the scale chooser: pick a reference material with accepted values
for the loan's δ (on the demo's brachiopod loan `MDGC/LN/0457`, *Seawater in-house*) and the
δ values are shown on its scale (one it has no value for stays as measured, flagged "no
scale value"); ratios such as ⁸⁷Sr/⁸⁶Sr keep theirs. **r** opens the ratio chooser: every δ
of the element on one ratio (δ44/42 put on δ44/40, say) by the exponential or equilibrium
law, each converted value marked `← 44/42` with the law and its factor k under the list.

**Sr screening** (**5**): each specimen's measured ⁸⁷Sr/⁸⁶Sr, what the loan's reference
curve expects at its stated age, the ages the curve allows for it, and the verdict — a
prompt to look closer, not a judgement. **u** chooses the curve (one of the stored curves),
**Ctrl+S** records the choice in the ledger.

## On an item
Its lineage (specimen → powders → solutions → aliquots → columns → cuts and results) with
masses, element amounts and yields; its custody history on the second tab. **d s k a m c r**
open the bench forms with this item filled in; **l** queues its label again.

## Corrections, attachments, reprints (Ctrl+P)
Opened on an item or a loan, the form has it filled in; the old value stays in the history.

- **Correct a concentration**: the value, one uncertainty, the reason (`SO-00001-M`). A value
  its powder cannot hold is refused as a likely typo, here and in the concentration form
  (**k**); type `yes` in the confirmation field once you have checked it.
- **Correct a column recovery**: the element recovered in a cut, the reason (`CU-00004-F`).
- **Attach a specimen photo**: the file's path, stage, caption; a missing file is named.
- **Attach a document to a loan**: the file's path and its role (agreement, letter ...).
- **Reprint labels**: scan the items, give the reason; asked first (or **R** on F5).

## Managers
Overriding a loan limit needs a manager and a written reason (the drill form's last field,
locked for technicians). Amending and closing a loan (Ctrl+P) and accepted reference values
(`tracker reference value`) are also for managers.

> **Safety.** Drilling makes fine dust; digestion uses concentrated acids (sometimes HF).
> tracker records the work; it is not a safety authority. Follow your institution's
> chemical-hygiene plan and local rules.
"""


class HelpScreen(Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "app.pop_screen", "Close help", id="help.close"),
    ]

    def compose(self) -> ComposeResult:
        yield OperatorBar("Help")
        with VerticalScroll(id="help"):
            yield Markdown(HELP)
        yield Footer(compact=True)
