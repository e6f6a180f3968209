"""frostwatch.reports: `night` (the night log), `render` (its page), `season` (the season summary),
`thermometers` (thermometers that read off against the others), `plots`, `panels`, `summary`, `mail`."""
