"""Page modules of the capbench workbench (``app.py``): widgets only, no physics."""
