"""The look of frostwatch's pages for phones: the status page's CSS, shared by the fleet page.

Standard library only and nothing else imported: the fleet page imports this module for its
style without the status page's store, advice and numpy.
"""

PAGE_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;margin:0 auto;padding:0 10px 2em;
max-width:48em;font-size:20px;line-height:1.35;background:#fafafa;color:#111}
h1{font-size:1.3em;margin:.5em 0 .1em}.sub{color:#444;font-size:.85em;margin:0 0 .6em}
.card{background:#fff;border:1px solid #ccc;border-left:10px solid #999;border-radius:6px;padding:.5em .7em;
margin:.7em 0}.card h2{font-size:1.15em;margin:.1em 0 .3em}
.r5{border-left-color:#a00}.r4{border-left-color:#d40}.r3{border-left-color:#d90}.r2{border-left-color:#cc0}
.monitored.r1,.monitored.r0{border-left-color:#2a2}
.card.unmonitored{background:#e6e6e6;border-color:#a00;border-left-color:#a00}
.unmonitored .big{color:#a00}
.banner{background:#a00;color:#fff;font-weight:700;padding:.5em .7em;border-radius:6px;margin:.5em 0}
.big{font-size:1.6em;font-weight:700}.lvl{font-weight:700;text-transform:uppercase}
.bad{color:#a00;font-weight:700}.note{color:#444;font-size:.8em}.action{font-weight:600}
table{border-collapse:collapse;width:100%}td{padding:2px 4px;border-bottom:1px solid #eee;vertical-align:top}
svg.chart{width:100%;height:auto;background:#fff;border:1px solid #ddd}
.chart .obs{fill:none;stroke:#1f77b4;stroke-width:2}.chart .proj{fill:none;stroke:#7b2d8e;stroke-width:2;
stroke-dasharray:6 4}.chart .t10{stroke:#d00;stroke-width:1.5}.chart .t90{stroke:#800;stroke-width:1.5;
stroke-dasharray:5 3}.chart .act{stroke:#f88;stroke-dasharray:2 3}.chart .now{stroke:#888}
.chart .lbl{font-size:10px;fill:#a00}.chart .ax{font-size:10px;fill:#555}
button{font-size:1.2em;padding:.6em 1.4em;border-radius:8px;border:0;background:#d40;color:#fff}
"""
