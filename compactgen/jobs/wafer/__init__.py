"""Statistics of a wafer: every device fitted, process spread and area-scaled mismatch extracted.

    kinds.py       per device kind: data read, parameters fitted and analysed, size, proof or why not
    table.py       the wafer folder: device table (id, die position, drawn diameter) and the
                   measurement files, each row or file tagged with its device id
    fits.py        one fit per device (calibrate.runner.fit_card, dw: calibrate.dw_fit), spread over
                   sim.tasks.run_tasks
    population.py  robust means, outliers, the electrical diameter offset, global spread and
                   mismatch (variance = global + mismatch x area_ref/area), correlations, bootstrap
    card_out.py    the card carrying the population's variation
    montecarlo.py  the proof: the built library's mc section in ngspice against the population
    report.py      HTML report; commands.py the `compactgen wafer-stats` command
    synthetic.py   seeded synthetic wafers (stt-mtj pillars, dw-mtj tracks) with their truth
"""
