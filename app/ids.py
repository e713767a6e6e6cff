"""Every component id of the app, in one place, so that callbacks, tests and extensions agree."""

from __future__ import annotations

# Stores (browser session state; the server keeps none)
SOURCE = "store-source"            # the raw file: name and base64 bytes
DATA = "store-data"                # the chosen series as plain lists, with the import report
EXCLUSIONS = "store-exclusions"    # points left out by the user, with an undo history
CAPACITY = "store-capacity"        # the committed capacity estimate K
SETTINGS = "store-settings"        # forms, terms, method, error model and K mode as one dict
FITS = "store-fits"                # plain data of every fit and the comparison rows
SORT = "store-sort"                # comparison table sort column and direction
HIGHLIGHT = "store-highlight"      # the observation under the pointer (clientside only)

# Data section
UPLOAD = "data-upload"
SERIES_PICK = "data-series"
MAP_TIME = "data-map-time"
MAP_VALUE = "data-map-value"
MAP_SERIES = "data-map-series"
MAP_TIME_UNIT = "data-map-time-unit"
MAP_SHEET = "data-map-sheet"
MAP_APPLY = "data-map-apply"
MAP_COLUMNS = "data-map-columns"   # datalist of known column names
DATA_MESSAGE = "data-message"
DATA_SUMMARY = "data-summary"
REPORT = "data-report"

# Model section
FORMS = "model-forms"
CONSTANT = "model-constant"
TERMS = "model-terms"
TERMS_MESSAGE = "model-terms-message"
METHOD = "model-method"
ERROR = "model-error"
K_INPUT = "model-k-input"
K_SLIDER = "model-k-slider"
K_MODE = "model-k-mode"
K_FROM_FIT = "model-k-from-fit"
K_NOTE = "model-k-note"
LIVE_NOTE = "model-live-note"

# Exclusions
EXCLUSION_LIST = "exclusion-list"
EXCLUSION_UNDO = "exclusion-undo"
EXCLUSION_CLEAR = "exclusion-clear"
EXCLUDE_ROW = "exclusion-row"        # row number typed by the user (keyboard route)
EXCLUDE_ROW_BUTTON = "exclusion-row-button"
RESTORE = "exclusion-restore"      # pattern-matching type: {"type": RESTORE, "index": i}

# Panels
G_CHANGE = "panel-change"
G_CANDIDATE = "panel-candidate"
G_TRAJECTORY = "panel-trajectory"
G_RESID_TIME = "panel-residual-time"
G_RESID_FITTED = "panel-residual-fitted"
G_OBS_PRED = "panel-observed-predicted"
GRAPHS = (G_CHANGE, G_CANDIDATE, G_TRAJECTORY, G_RESID_TIME, G_RESID_FITTED, G_OBS_PRED)
CHANGE_AXIS = "panel-change-axis"
CANDIDATE_SUMMARY = "panel-candidate-summary"
MISFIT_FLAG = "panel-misfit-flag"
TRAJECTORY_NOTE = "panel-trajectory-note"

# Comparison
COMPARISON = "comparison-table"
COMPARISON_NOTES = "comparison-notes"
SORT_BUTTON = "comparison-sort"    # pattern-matching type: {"type": SORT_BUTTON, "column": key}

# Messages and places left for later sections
ERROR_BANNER = "app-error"
ERROR_TEXT = "app-error-text"
ERROR_DISMISS = "app-error-dismiss"
EXPORT_SLOT = "slot-export"        # export actions (records, figures, reports)
DYNAMICS_SLOT = "slot-dynamics"    # equilibria, cobweb, forecast panels
SERIES_SLOT = "slot-series"        # overview of many series (small multiples, plate map)
