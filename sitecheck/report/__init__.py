"""The site record (PDF), the data export (CSV / JSON) and the drawing of a bearing.

Above the core and the store: it reads what the store holds and draws what the core
already worked out; it calculates nothing new.
"""
