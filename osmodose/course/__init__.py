"""A course of therapy over a patient's stay: the episode file, its timeline, findings, projection and plot.

Pure core like the rest of the engine (no textual, matplotlib only inside
`plot.write_plot`).  A front end typically calls `store.load_episode`,
`entries.parse_*` + `store.update_episode`, `report.review`, `plan.plan_dose`
and `series.course_series`.
"""
