"""Every file, environment and database access of the model.

The pure core of :mod:`turnback.model` never imports from here; this
package reads files (monitoring records, lake and plan files, package
data) and the SQLite store, and hands plain objects to the core.
"""
