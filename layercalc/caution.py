"""The caution every report, JSON document and workbook carries (one wording, one place)."""

CAUTION = ("Diagnostic estimates for checking and training, not forecasts or warnings; "
           "defer to the official forecast service and local procedures.")
