"""Component ids shared between screens (one place, so a typo is an import error)."""

TABS = "tabs"
TABLE = "results-table"
PARTIAL = "partial-choice"
NOTICE = "notice"

FIT = "fit-store"            # the one fit result every screen draws from
SAVED_FIT = "saved-fit-store"  # the fit saved in an opened project file
SOURCE = "source-store"      # name of the file the table came from
PICKED = "picked-store"      # solvents clicked in the shortlist
BLEND = "blend-store"        # the blend clicked in the blend designer
OPEN_PAYLOAD = "open-payload"    # checked upload of a results/project file
SHELF_PAYLOAD = "shelf-payload"  # checked upload of a shelf file
BOOT = "boot-store"          # a bootstrap of the fit (intervals, resampled spheres)
NEXT = "next-store"          # the suggested next trials and the results to re-check
RESTRICTED_PAYLOAD = "restricted-payload"  # checked upload of a restricted-solvents list
#: Per screen, how many times it was shown (counted in the browser): a screen computes
#: when it is shown, without a request for every other tab switch.
SHOWN = {"next": "next-shown", "blends": "blends-shown", "replace": "replace-shown"}
