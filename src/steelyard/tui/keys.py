"""Every key of the editor in one table: the App's bindings and the help screen read it.

Plain letters work on the main screen (the table has focus); ctrl keys work
everywhere. No binding needs ctrl+arrow, so terminals and tmux setups that
send those differently lose nothing.
"""

from __future__ import annotations

from textual.binding import Binding

#: (keys, action, label in the footer, shown in the footer, help text)
MAIN_KEYS: tuple[tuple[str, str, str, bool, str], ...] = (
    ("f1,question_mark", "help", "Help", True, "this help: every key"),
    ("ctrl+s", "save", "Save", True, "save the ledger (atomic; asks if the file changed on disk)"),
    ("W", "save_as", "Save as", False, "save under another name"),
    ("ctrl+o,O", "open", "Open", False, "open another ledger file"),
    ("ctrl+q", "quit", "Quit", True, "quit (asks when there is unsaved work)"),
    ("a,insert", "add", "Add", True, "add an item (form)"),
    ("e", "edit", "Edit", True, "edit the item under the cursor (form; Enter works too)"),
    ("d", "duplicate", "Duplicate", False, "duplicate the item under the cursor"),
    ("delete,x", "delete", "Delete", False, "delete the item under the cursor (asks first)"),
    ("m", "move", "Move", False, "move the item under the cursor to another group"),
    ("ctrl+z,u", "undo", "Undo", True, "undo the last change (any number of steps)"),
    ("ctrl+y,U", "redo", "Redo", False, "redo the change undone last"),
    ("o", "open_assembly", "Open placed", False,
     "open the file the row under the cursor is placed from (or choose a placement), in place"),
    ("backspace", "back", "Back", False, "back to the parent file (asks about unsaved work first)"),
    ("A", "placement", "Placements", False, "add, move (at, mirror, turns) or remove a placement of another file"),
    ("L", "loadout", "Loadout", True, "choose the loadout and edit its amounts"),
    ("T", "setup", "Set-up", False,
     "set-up: loadouts, envelopes, limits, allocations, [mac], [fuel], [growth] (create, edit, copy, delete)"),
    ("N", "units_frame", "Units/frame", False, "the file's units and body frame (while the ledger holds no entries)"),
    ("c", "compare", "Compare", False,
     "compare with another loadout, the ledger as saved, or another file or snapshot"),
    ("w", "weighing", "Weighing", False,
     "weighing form: scale readings and tares give the empty mass and CG, replacing the empty-vehicle item"),
    ("t", "units", "Units", True, "switch display units: file units, SI, US customary"),
    ("D", "choose_units", "Unit choice", False,
     "choose the unit of mass, length and inertia (g, mm, oz, slug·ft², ...); saved for you, not in the file"),
    ("slash,f", "filter", "Filter", False, "filter items by text in id, name or group (Esc clears)"),
    ("s", "sort", "Sort", False, "sort by the next column (file order, id, name, ..., moment)"),
    ("S", "reverse_sort", "Reverse", False, "reverse the sort order"),
    ("g", "grouped", "Groups", False, "group rows with subtotals, or a flat list"),
    ("minus", "fold_all(True)", "Fold all", False, "fold every group"),
    ("plus,equals_sign", "fold_all(False)", "Unfold all", False, "unfold every group"),
    ("1", "view('ledger')", "Ledger", False, "show the ledger table"),
    ("2", "view('totals')", "Totals", False, "show totals: mass, CG, inertia, principal axes"),
    ("3", "view('envelopes')", "Envelopes", False, "show envelope status, chart and caution"),
    ("4", "view('log')", "Log", False, "show the change log"),
    ("n", "envelope(1)", "Next envelope", False, "chart the next envelope (envelopes view)"),
    ("p", "envelope(-1)", "Previous envelope", False, "chart the previous envelope (envelopes view)"),
    ("b", "sequence(1)", "Next sequence", False,
     "chart the next burn or drop sequence that starts from this loadout (envelopes view)"),
)

#: keys handled by the widgets themselves, for the help screen only
TABLE_KEYS = (
    ("up / k, down / j", "move the cursor"),
    ("page up, page down, home, end", "move by a page, to the first or last row"),
    ("left / h, right / l", "scroll the table sideways"),
    ("enter", "edit the item, or fold / unfold the group"),
    ("space", "fold / unfold the group under the cursor"),
)
FORM_KEYS = (
    ("tab, shift+tab", "next / previous field"),
    ("enter", "apply the change (only when every field is valid)"),
    ("escape", "cancel: nothing is changed"),
)
LOADOUT_KEYS = (
    ("up, down, enter", "choose the loadout to work with (it applies at once)"),
    ("tab", "go to the amounts of the chosen loadout"),
    ("enter on an amount", "type a new amount: 0.75 (fraction), 75%, 82 kg, 16 gal; empty = none"),
    ("escape", "back to the ledger"),
)
COMPARE_KEYS = (
    ("c (main screen)", "choose what to compare with: a loadout, the ledger as saved, a file or snapshot"),
    ("1 / 2 / 3", "totals side by side · items added, removed, changed (ranked) · envelopes"),
    ("up, down", "in the items: the highlighted item's fields show old → new below the list"),
    ("enter on an item", "show its row in the ledger"),
    ("s", "swap the sides (B against A becomes A against B)"),
    ("escape, q", "back to the ledger"),
)
WEIGHING_KEYS = (
    ("w (main screen)", "open the weighing form (prefilled from the file's [weighing] table)"),
    ("tab, shift+tab, enter", "next / previous field (Enter moves on too)"),
    ("enter on + point / + on board / + missing", "add a row; a row left empty is ignored"),
    ("enter on Apply", "replace the empty-vehicle item (action 'weighing' in the change log; undo works)"),
    ("escape", "cancel: nothing is changed"),
)
SETUP_KEYS = (
    ("T (main screen)", "the set-up list: units and frame, loadouts, envelopes, limits, allocations, MAC, fuel, growth"),
    ("enter", "edit the entry, or add one on a '+ new' line"),
    ("c / x, Del", "copy the entry / delete it (asks first; refused while another table names it)"),
    ("in a form", "fields are the file's keys; bare numbers in the file's units; ctrl+s or Apply applies"),
    ("escape", "back; a form left with escape changes nothing"),
)
RESTORE_KEYS = (
    ("on opening", "unsaved edits left by a crash or a dropped connection are offered, with what they are"),
    ("Restore", "rebuild those edits (and their change-log entries) on the ledger"),
    ("Discard them", "throw them away (asks once more)"),
    ("escape, Later", "keep them in the journal and open the file read-only"),
)
OTHER_KEYS = (
    ("ctrl+p", "command palette: every main action by name"),
    ("escape", "close a dialog, or leave the filter"),
)


def main_bindings() -> list[Binding]:
    return [Binding(keys, action, label, show=show, tooltip=text)
            for keys, action, label, show, text in MAIN_KEYS]


def pretty_keys(keys: str) -> str:
    names = {"question_mark": "?", "slash": "/", "minus": "-", "plus": "+", "equals_sign": "=",
             "delete": "Del", "insert": "Ins"}
    return " / ".join(names.get(k, k) for k in keys.split(","))
