"""Files for people and CAD: tables, drawings, plots, reports. Reads results; computes no mechanics."""
