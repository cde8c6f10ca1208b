"""The one caution text: the sheet, the results document and the command line all print it."""

CAUTION = (
    "Schematic aid for the report — not a substitute for the images or the interpreting "
    "physician's judgement. Criteria must be validated locally; follow local protocols and "
    "licensed practice."
)
