"""The steps a person takes with a project, one module per step.

Each module here reads what its step needs from a project file (:mod:`engine.project`), hands
the domain code below it plain objects (a :class:`~engine.ready_meters.PreparedSite` of meters
made ready once, a calendar, weather, settings) and keeps the results back in the project. The
command line (:mod:`engine.cli`) and the window call these; nothing below them receives a
project.
"""
