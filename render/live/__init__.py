"""The live preview: a local web page that walks a visitor round the exhibit.

:mod:`session` holds the scene and renders frames for eye points; :mod:`server` is the
web application (Starlette on uvicorn, the optional extra ``cloakview[live]``); the page
itself (``page/``) is plain HTML, CSS and JavaScript of our own.
"""
