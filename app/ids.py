"""Every component id of the app, in one place, so that callbacks, tests and extensions agree."""

from __future__ import annotations

# Stores (browser session state; the server keeps none)
SOURCE = "store-source"            # the raw file: name and base64 bytes
DATA = "store-data"                # the chosen series as plain lists, with the import report
EXCLUSIONS = "store-exclusions"    # points left out by the user, with an undo history
CAPACITY = "store-capacity"        # the committed capacity estimate K
CAPACITY_DATA = "store-capacity-data"   # the data key the committed K was set for (held K across series)
SETTINGS = "store-settings"        # forms, terms, method, error model and K mode as one dict
FITS = "store-fits"                # plain data of every fit and the comparison rows
SORT = "store-sort"                # comparison table sort column and direction
HIGHLIGHT = "store-highlight"      # the observation under the pointer (clientside only)

# Data section
UPLOAD = "data-upload"
UPLOAD_REFUSED = "store-upload-refused"  # a file the browser refused as too large (set by upload_guard.js)
SERIES_PICK = "data-series"
MAP_TIME = "data-map-time"
MAP_VALUE = "data-map-value"
MAP_SERIES = "data-map-series"
MAP_TIME_UNIT = "data-map-time-unit"
MAP_SHEET = "data-map-sheet"
MAP_REPLICATES = "data-map-replicates"
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
FORM_KEY = "panel-form-key"          # the one key of the chosen forms, beside the panels
STATE_SCALE = "panel-state-scale"    # linear or log scale for every axis of the state p
PATH_FROM = "panel-path-from"        # increments fits: draw the iterated map from the first/last observation

# Comparison
COMPARISON = "comparison-table"
COMPARISON_NOTES = "comparison-notes"
SORT_BUTTON = "comparison-sort"    # pattern-matching type: {"type": SORT_BUTTON, "column": key}

# Messages and places left for later sections
ERROR_BANNER = "app-error"
ERROR_TEXT = "app-error-text"
ERROR_DISMISS = "app-error-dismiss"
MAIN = "main"                      # the column of panels (a chosen series scrolls it into view)
EXPORT_SLOT = "slot-export"        # export actions (records, figures, reports)

# Export and reopening (inside EXPORT_SLOT)
EXPORT_FORMS = "export-forms"              # which fitted forms go into the files
EXPORT_SIZE = "export-size"                # image size preset: screen, slide or print
EXPORT_WHAT = "export-what"                # which files: record, images, table, report
EXPORT_BUTTON = "export-button"
EXPORT_MESSAGE = "export-message"
EXPORT_IMAGE_MESSAGE = "export-image-message"   # written by the browser when the PNGs are saved
EXPORT_IMAGES = "store-export-images"      # figures and sizes for the browser to draw as PNG
DOWNLOAD_RECORD = "export-download-record"
DOWNLOAD_CSV = "export-download-csv"
DOWNLOAD_HTML = "export-download-html"
RECORD_UPLOAD = "export-record-upload"
RECORD_MESSAGE = "export-record-message"
PENDING_CAPACITY = "store-pending-capacity"   # K of a reopened record, applied once the data are in
DYNAMICS_SLOT = "slot-dynamics"    # equilibria, cobweb, forecast panels
SERIES_SLOT = "slot-series"        # overview of many series (small multiples, plate map)

# Many series (the picker in SERIES_SLOT, the overview section in the main column)
BATCH_SERIES = "store-batch-series"      # every series of the file as plain lists (multi-series files only)
BATCH_GROUPS = "store-batch-groups"      # replicate group of each series id
BATCH_JOB = "store-batch-job"            # the plan of the current batch run (written only when a run starts)
BATCH_FITS = "store-batch-fits"          # per-chunk fits of the run, filled in place as chunks finish
BATCH_PROGRESS = "store-batch-progress"  # series fitted so far in the current run
BATCH_CANCEL = "store-batch-cancel"      # the run the user stopped
GRID_VIEW = "store-batch-grid-view"      # ids on the shown page and their panel boxes (for the highlight)
BATCH_TICK = "batch-tick"                # dcc.Interval that drives one chunk per tick
SERIES_OVERVIEW = "series-overview"
PICKER_BOX = "series-picker"
GROUP_MODE = "series-group-mode"
GROUP_TEXT = "series-group-text"
GROUP_MESSAGE = "series-group-message"
GROUP_FILTER = "series-group-filter"
SERIES_PREV = "series-prev"
SERIES_NEXT = "series-next"
SERIES_POSITION = "series-position"
BATCH_RUN = "batch-run"
BATCH_STOP = "batch-stop"
BATCH_BAR = "batch-bar"
BATCH_STATUS = "batch-status"
BATCH_FORM = "batch-form"
GRID_PAGE = "batch-page"
GRID = "batch-grid"
PLATE_BOX = "batch-plate-box"
PLATE_QUANTITY = "batch-plate-quantity"
PLATE = "batch-plate"
BATCH_FAILED = "batch-failed"
BATCH_TABLES = "batch-tables"            # the table download, group means and F test (after a run)
BATCH_TABLE_BUTTON = "batch-table-button"
BATCH_DOWNLOAD = "batch-download"
GROUP_SUMMARY = "batch-group-summary"
FTEST_CONSTANT = "batch-ftest-constant"
FTEST_RUN = "batch-ftest-run"
FTEST_RESULT = "batch-ftest-result"

# Dynamics, uncertainty and forecast (panel 7, in DYNAMICS_SLOT)
BOOT = "store-bootstrap"           # the bootstrap run in progress: request, partial refits, progress
BOOT_DONE = "store-bootstrap-done"  # finished (or cancelled) bootstraps, one per fit signature
BOOT_SUMMARY = "store-bootstrap-summary"  # their counts and intervals only (small: rides along with table updates)
FORECAST = "store-forecast"        # the forecast asked for and its band, for the trajectory panel
PREVIEW = "store-preview"        # what the browser needs to preview a K being dragged (assets/live.js)
DYN_VISIBLE = "store-dynamics-visible"  # whether panel 7 is on screen (assets/live.js watches it)
DYN_STALE = "store-dynamics-stale"      # panel 7 describes older fits: drawn when it comes into view
DYN_DRAW = "store-dynamics-draw"        # set in the browser when panel 7 is both stale and in view
K_DROP = "store-k-drop"          # the trajectory's relayout event when it moved the K line (assets/live.js)
DYN_FIT = "dynamics-fit"
DYN_SENTENCES = "dynamics-sentences"
DYN_EQUILIBRIA = "dynamics-equilibria"
G_COBWEB = "panel-cobweb"
G_SWEEP = "panel-sweep"
BOOT_N = "bootstrap-resamples"
BOOT_SEED = "bootstrap-seed"
BOOT_RUN = "bootstrap-run"
BOOT_CANCEL = "bootstrap-cancel"
BOOT_TICK = "bootstrap-tick"
BOOT_PROGRESS = "bootstrap-progress"
BOOT_STATUS = "bootstrap-status"
DYN_INTERVALS = "dynamics-intervals"
DYN_DERIVED = "dynamics-derived"
DYN_LEVEL = "dynamics-level"
FC_MODE = "forecast-mode"
FC_AMOUNT = "forecast-amount"
FC_BOUND = "forecast-bound"
FC_RUN = "forecast-run"
FC_CLEAR = "forecast-clear"
FC_NOTES = "forecast-notes"

# Population (mixed-effects) panel, in the many-series section
POP_STORE = "store-population"          # the last population fit of this tab: request and result
POP_BOX = "population-box"
POP_FORM = "population-form"
POP_RANDOM = "population-random"
POP_COVARIANCE = "population-covariance"
POP_ESTIMATION = "population-estimation"
POP_SHIFT = "population-shift"
POP_RUN = "population-run"
POP_STATUS = "population-status"
POP_TABLE = "population-table"
POP_CURVES = "population-curves"
POP_FOREST_CONSTANT = "population-forest-constant"
POP_FOREST = "population-forest"
POP_LR_RANDOM = "population-lr-random"
POP_LR_SHIFT = "population-lr-shift"
POP_LR_RUN = "population-lr-run"
POP_LR_RESULT = "population-lr-result"
