"""sedreport: sedation records, committee audits and COPD trends from recorded monitoring data.

The tool documents and reviews recorded data. It is not an alarm, not a diagnosis and not a
substitute for watching the patient; local sedation policy and licensed practice decide.
"""

__version__ = "0.1.0"
