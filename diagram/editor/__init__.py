"""The local browser editor: the map as the form, one study at a time.

``study_edit`` holds what the editor does to a study (check, assess, draw, place a click, save,
export) on top of the pipeline; ``app`` is the web application (routes and the request guard);
``serve`` binds the address and runs it; ``static/`` ships the page, its script and its style.
Needs the optional packages of ``limbchart[edit]`` (Starlette and uvicorn).
"""
