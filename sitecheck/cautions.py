"""The caution every output carries: the command line, the pages, the site record (PDF),
the data export and the notices read it from here, so it has one wording."""

CAUTION = (
    "Caution: these results support, and never replace, the judgement of a competent "
    "engineer. Local codes, national annexes and licensed practice govern."
)
