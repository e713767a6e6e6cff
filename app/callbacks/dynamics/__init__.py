"""Panel 7: what the chosen fit implies (describe), its bootstrap run chunk by chunk with progress and
cancelling (bootstrap) and the forecast band (forecast); which_fit ties each to the fit it belongs to.

New fits redraw this panel in the same reply as the fits (app/callbacks/live.py); the modules here
follow the panel's own controls.
"""
