"""Display: number formatting, formula typesetting, figures, HTML and PDF.

Only this package scales SI values for display (kW, kvar, µF). Matplotlib and
WeasyPrint are imported inside the functions that use them, so commands that
render nothing start fast.
"""
