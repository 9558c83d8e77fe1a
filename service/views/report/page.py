"""The report's page: one self-contained HTML document with inline CSS and A4 print rules."""

from __future__ import annotations

from string import Template

from service.views.report.html import Html, esc

CSS = """
@page { size: A4; margin: 16mm 18mm 18mm 18mm; }
:root { --ink: #1b1b1b; --muted: #5a5a5a; --rule: #c9c9c9; --tint: #f3f5f7;
        --accent: #0072B2; --alert: #A33D00; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", "Helvetica Neue", Arial, sans-serif; font-size: 10pt;
       line-height: 1.4; color: var(--ink); margin: 0 auto; max-width: 1360px;
       padding: 8mm clamp(4mm, 2.5vw, 12mm); }
h1 { font-size: 17pt; margin: 0 0 2mm; }
h2 { font-size: 13.5pt; margin: 9mm 0 2mm; padding-bottom: 1mm;
     border-bottom: 2px solid var(--accent); }
h3 { font-size: 11pt; margin: 6mm 0 1.5mm; }
h4 { font-size: 10pt; margin: 4mm 0 1mm; }
h1, h2, h3, h4 { break-after: avoid; page-break-after: avoid; }
p { margin: 1mm 0 2mm; }
.lede { color: var(--muted); margin-bottom: 4mm; }
.mono { font-family: "DejaVu Sans Mono", Menlo, Consolas, monospace; font-size: 8.5pt;
        overflow-wrap: anywhere; }
.mono.lib { color: var(--muted); font-size: 7.5pt; }
table { border-collapse: collapse; width: 100%; margin: 1.5mm 0 3mm; font-size: 8.5pt;
        break-inside: auto; }
th, td { border-bottom: 1px solid var(--rule); padding: 0.8mm 1.6mm; text-align: left;
         vertical-align: top; }
th { background: var(--tint); font-weight: 600; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
th.num { white-space: normal; }
tr { break-inside: avoid; }
table.facts td:first-child { width: 32%; font-weight: 600; }
table.ranking td:nth-child(2) { min-width: 42mm; }
.cautions { border-left: 4px solid var(--alert); background: #fbf3ee; padding: 2mm 4mm;
            margin: 3mm 0 5mm; }
.cautions h2 { border: none; margin-top: 1mm; font-size: 11pt; }
.cautions li { margin-bottom: 1mm; }
.note { color: var(--muted); font-size: 8.5pt; }
.alert { color: var(--alert); font-weight: 600; }
.candidate { break-inside: avoid-page; }
figure.chart { margin: 2mm 0 4mm; break-inside: avoid; }
figure.chart svg { display: block; width: 100%; height: auto; max-width: 1000px; }
p, li, figcaption { max-width: 120ch; }
td { overflow-wrap: anywhere; }
p.history a { margin: 0 1mm; }
figcaption { color: var(--muted); font-size: 8.5pt; margin-top: 1mm; }
section.series { break-before: page; }
a { color: var(--accent); }
nav.site { display: flex; align-items: center; gap: 4mm; font-size: 9pt; margin-bottom: 5mm;
           padding-bottom: 2mm; border-bottom: 1px solid var(--rule); }
nav.site .who { margin-left: auto; color: var(--muted); }
nav.site form { margin: 0; }
button { font: inherit; padding: 1mm 3mm; border: 1px solid var(--accent); border-radius: 1mm;
         background: #fff; color: var(--accent); cursor: pointer; }
form.sign-in { display: flex; flex-direction: column; gap: 2mm; max-width: 110mm; margin: 4mm 0; }
form.sign-in input { font: inherit; padding: 1.5mm; border: 1px solid var(--muted); }
form.sign-in button { align-self: flex-start; background: var(--accent); color: #fff; }
form.filter { display: flex; align-items: center; gap: 2mm; margin: 2mm 0 4mm; }
form.filter input { font: inherit; padding: 1mm; border: 1px solid var(--muted); }
nav.pager { margin: 3mm 0; font-size: 9.5pt; }
@media print {
  nav.site { display: none; }
  body { padding: 0; max-width: none; }
  figure.chart svg { max-width: 170mm; }
  p.history { display: none; }
  * { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  a { color: inherit; text-decoration: none; }
}
"""

_PAGE = Template("""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>$title</title>
<style>$css</style>
</head>
<body>
$body
</body>
</html>
""")


def page(title: str, body: Html) -> str:
    """The whole HTML document."""
    return _PAGE.substitute(title=esc(title), css=CSS, body=body)
