"""Report layer: turns a results dict (the content of results.json) into the HTML report,
the spreadsheet and the JSON file.

``html.render_html`` and ``xlsx.render_xlsx`` are pure functions of (results, context);
``writer.write_reports`` writes all three files atomically and refuses to overwrite files
that are not earlier stresscheck reports. ``stresscheck.texts.CAUTIONS`` is the safety and scope
text that every report carries.
"""
