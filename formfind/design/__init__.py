"""Decisions: form finding (the axis), checks and verdicts, trade studies."""
