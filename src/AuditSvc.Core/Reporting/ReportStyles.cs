namespace AuditSvc.Core.Reporting;

/// <summary>The report's inline style sheet: warm ink on paper, one deep-teal accent, verdict colours (see docs/ui.md); local fonts only.
/// Public so that the service's browser pages around the report look the same.</summary>
public static class ReportStyles
{
    /// <summary>The CSS text, without the style element around it.</summary>
    public const string Css = """
:root { --fg:#2b2621; --muted:#6b6158; --line:#ddd3c4; --soft:#f7f3ec; --accent:#2f5d62;
        --pass:#3d6f2a; --pass-bg:#edf3e4; --block:#9e2a1e; --block-bg:#f8e6e1; --warn:#8a5a00; --warn-bg:#fbf0d5; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--fg); background: #fffdf9; font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif; }
main { max-width: 1200px; margin: 0 auto; padding: 0 24px 32px; }
h2 { font-size: 20px; margin: 32px 0 8px; padding-bottom: 4px; border-bottom: 1px solid var(--line); }
h3 { font-size: 15px; margin: 16px 0 6px; }
h4 { font-size: 12px; margin: 12px 0 4px; text-transform: uppercase; letter-spacing: .04em; color: var(--muted); }
a { color: var(--accent); }
.mono { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, "DejaVu Sans Mono", monospace; font-size: 12.5px; word-break: break-all; }
.muted { color: var(--muted); }
.small { font-size: 12px; }
.verdict { display: flex; align-items: flex-start; gap: 20px; padding: 18px 32px 16px; color: #fff; }
.verdict-mark { font-size: 40px; line-height: 1; width: 52px; height: 52px; display: flex; align-items: center; justify-content: center;
  border: 3px solid rgba(255,255,255,.85); flex: none; }
.verdict-word { font-size: 34px; font-weight: 800; letter-spacing: .12em; line-height: 1.1; }
.verdict-text { font-size: 15.5px; max-width: 980px; }
.verdict-text p { margin: 6px 0 0; }
.verdict-reasons { margin: 6px 0 0; padding-left: 18px; }
.verdict-reasons li { margin: 3px 0; }
.verdict details.tech { margin-top: 6px; font-size: 12px; opacity: .9; }
.verdict details.tech summary { cursor: pointer; }
.verdict a { color: #fff; }
.verdict.v-pass { background: var(--pass); }
.verdict.v-block { background: var(--block); }
.verdict.v-other, .verdict.v-warn { background: #555; }
.summary { display: grid; grid-template-columns: 1fr 1fr; gap: 16px; max-width: 1200px; margin: 16px auto 0; padding: 0 24px; }
.card { border: 1px solid var(--line); border-radius: 6px; padding: 12px 16px; background: var(--soft); }
.card h2 { margin: 0 0 8px; border: 0; font-size: 16px; }
dl { margin: 0; display: grid; grid-template-columns: max-content 1fr; gap: 4px 16px; }
dt { color: var(--muted); }
dd { margin: 0; }
dl.grid { max-width: 720px; }
dl.tight { gap: 2px 12px; font-size: 13px; }
nav { display: flex; flex-wrap: wrap; gap: 4px 16px; margin: 16px 0 0; padding: 8px 0; border-bottom: 1px solid var(--line); font-size: 13px; }
nav a { text-decoration: none; }
table { border-collapse: collapse; width: 100%; margin: 4px 0 8px; }
th, td { text-align: left; padding: 6px 8px; border-bottom: 1px solid var(--line); vertical-align: top; }
th { font-size: 12px; color: var(--muted); font-weight: 600; background: var(--soft); }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
table.compact td { padding: 2px 8px; font-size: 12.5px; }
table.inner { margin: 0; font-size: 12.5px; }
table.inner th { background: none; padding: 2px 6px; }
table.inner td { padding: 2px 6px; border-bottom: 1px dotted var(--line); }
table.inner td:first-child { white-space: nowrap; }
table.inner tr.detail td { white-space: normal; overflow-wrap: anywhere; border-bottom: 1px solid var(--line); padding-bottom: 4px; }
table.attrs { width: 100%; table-layout: fixed; }
table.attrs > thead > tr > th:nth-child(1) { width: 13%; }
table.attrs > thead > tr > th { white-space: normal; }
table.attrs > thead > tr > th:nth-child(2), table.attrs > thead > tr > th:nth-child(6) { width: 7%; }
table.attrs > thead > tr > th:nth-child(3), table.attrs > thead > tr > th:nth-child(4) { width: 8%; }
table.attrs > thead > tr > th:nth-child(5) { width: 12%; }
table.attrs > thead > tr > th:nth-child(7) { width: 7%; }
table.attrs > thead > tr > th:nth-child(8) { width: 38%; }
table.attrs table.inner td:first-child { white-space: normal; }
table.attrs table.inner { width: 100%; }
.regions { display: flex; flex-wrap: wrap; gap: 12px; margin-top: 8px; }
figure.region { margin: 0; max-width: 260px; font-size: 12px; }
svg.regionmap { display: block; border: 1px solid var(--line); image-rendering: pixelated; }
svg.regionmap rect { fill: #5b2a86; }
svg.regionmap rect.bg { fill: #faf7f0; }
svg.regionmap rect.box { fill: none; stroke: #d2691e; stroke-width: 0.6; stroke-dasharray: 1.2 0.6; }
.tag { display: inline-block; padding: 0 6px; border-radius: 3px; background: #eef1f4; border: 1px solid var(--line); font-size: 12px; }
.tag.warn { background: var(--warn-bg); color: var(--warn); border-color: #f0d58c; }
.pill { display: inline-block; padding: 0 8px; border: 1.5px solid currentColor; font-weight: 700; font-size: 12px; text-transform: uppercase; }
.pill.v-pass { background: var(--pass-bg); color: var(--pass); }
.pill.v-block { background: var(--block-bg); color: var(--block); }
.pill.v-warn { background: var(--warn-bg); color: var(--warn); }
.cue { font-family: ui-monospace, Menlo, Consolas, "DejaVu Sans Mono", monospace; background: #eef3fd; border: 1px solid #cfdcf7; padding: 0 6px; border-radius: 3px; }
.note { font-size: 12px; color: var(--warn); margin-top: 2px; }
.cautions { border: 2px solid #c9a227; background: #fffaf0; border-radius: 6px; padding: 4px 20px 12px; margin-top: 24px; }
.cautions h2 { border: 0; margin-top: 12px; }
.cautions .cols { display: grid; grid-template-columns: 1fr 1fr; gap: 24px; }
.caution-list li { font-weight: 600; margin: 4px 0; }
.bar { position: relative; display: inline-block; vertical-align: middle; width: 120px; height: 12px; background: #eceff2; border-radius: 2px; }
.bar.thin { width: 100px; height: 8px; }
.bar .fill { position: absolute; left: 0; top: 0; bottom: 0; background: #7a8694; border-radius: 2px; }
.bar .fill.over { background: var(--block); }
.bar .fill.neutral { background: #8aa4c8; }
.bar .mark { position: absolute; top: -3px; bottom: -3px; width: 2px; margin-left: -1px; background: var(--fg); }
.leak { white-space: nowrap; }
.leak-num { margin-left: 8px; font-variant-numeric: tabular-nums; }
.leak-num.over { color: var(--block); font-weight: 700; }
.finding { border: 1px solid var(--line); border-radius: 6px; padding: 8px 16px 12px; margin: 12px 0; page-break-inside: avoid; }
.finding h3 { margin: 4px 0 8px; }
.stats { display: flex; flex-wrap: wrap; gap: 6px 20px; margin-bottom: 8px; }
.stat .k { color: var(--muted); font-size: 12px; margin-right: 6px; }
.stat .v { font-weight: 600; font-variant-numeric: tabular-nums; }
.finding-body { display: flex; flex-wrap: wrap; gap: 24px; align-items: flex-start; }
.exemplars { display: grid; grid-template-columns: repeat(3, 104px); gap: 8px; }
.exemplars figure { margin: 0; width: 104px; }
.exemplars img, .placeholder { display: block; width: 96px; height: 96px; object-fit: contain; image-rendering: pixelated;
  border: 1px solid var(--line); background: #fafafa; }
.placeholder { display: flex; align-items: center; justify-content: center; text-align: center; font-size: 11px; color: var(--muted);
  background: repeating-linear-gradient(45deg, #f4f4f4, #f4f4f4 6px, #eaeaea 6px, #eaeaea 12px); }
.exemplars.whole { grid-template-columns: repeat(3, 136px); }
.exemplars.whole figure { width: 136px; }
.exemplars.whole img, .exemplars.whole .placeholder { width: 128px; height: 128px; image-rendering: auto; }
.exemplars figcaption { font-size: 11px; line-height: 1.3; margin-top: 2px; overflow: hidden; text-overflow: ellipsis; white-space: nowrap; }
.side { min-width: 240px; max-width: 360px; }
.peakmap { display: grid; grid-template-columns: repeat(3, 28px); grid-template-rows: repeat(3, 28px); gap: 2px; }
.peakmap span { display: flex; align-items: center; justify-content: center; font-size: 11px; border-radius: 2px; font-variant-numeric: tabular-nums; }
.more { font-weight: 600; }
h2.part { font-size: 13px; text-transform: uppercase; letter-spacing: .12em; color: var(--muted); border-bottom: 3px double var(--line); margin-top: 48px; }
.cuecard { border: 1px solid var(--line); border-left: 6px solid var(--muted); background: #fff; padding: 10px 16px 12px; margin: 12px 0; page-break-inside: avoid; }
.cuecard.follows { border-left-color: var(--block); }
.cuecard.quiet { border-left-color: var(--line); background: var(--soft); padding: 6px 14px; }
.cuecard.quiet h3 { font-size: 14px; }
.cc-head { display: flex; flex-wrap: wrap; align-items: baseline; gap: 6px 16px; justify-content: space-between; }
.cc-head h3 { margin: 2px 0 6px; font-size: 16px; }
.toward { font-weight: 400; color: var(--muted); font-size: 14px; }
.toward strong { color: var(--fg); }
.cc-mark { font-weight: 700; font-size: 12.5px; letter-spacing: .03em; white-space: nowrap; padding: 1px 8px; border: 1.5px solid currentColor; }
.mark-s { font-weight: 700; font-size: 11.5px; white-space: nowrap; }
.m-block { color: var(--block); }
.m-pass { color: var(--pass); }
.m-info { color: var(--warn); }
.cc-leak { display: flex; align-items: center; gap: 8px; margin: 2px 0 6px; }
.cc-leak .k { font-size: 12px; color: var(--muted); }
ul.plain { margin: 4px 0 8px; padding-left: 18px; }
ul.plain li { margin: 3px 0; max-width: 980px; }
ul.plain li.blocks { font-weight: 600; }
.cc-body { display: flex; flex-wrap: wrap; gap: 16px 28px; align-items: flex-start; }
.cc-body figure.region { max-width: 150px; }
.cc-units h4 { margin-top: 0; }
.unitgrids { display: flex; flex-wrap: wrap; gap: 12px; }
figure.unitgrid { margin: 0; width: 134px; font-size: 11.5px; line-height: 1.3; }
.mini { display: grid; grid-template-columns: repeat(3, 42px); gap: 2px; }
.mini img, .mini .pic, .mini .placeholder { display: block; width: 42px; height: 42px; object-fit: contain; image-rendering: pixelated; border: 1px solid var(--line); background-color: #fafafa; }
.pic { display: block; background-size: contain; background-repeat: no-repeat; background-position: center; image-rendering: pixelated; }
.exemplars .pic { width: 96px; height: 96px; border: 1px solid var(--line); background-color: #fafafa; }
.exemplars.whole .pic { width: 128px; height: 128px; image-rendering: auto; }
.cc-foot { margin-top: 10px; padding-top: 8px; border-top: 1px dashed var(--line); }
.plain-none { font-size: 15px; }
.makeup { display: grid; grid-template-columns: max-content 120px max-content; gap: 4px 8px; align-items: center; font-size: 12.5px; margin-bottom: 8px; }
.makeup .k { color: var(--muted); }
.unit-cue { border-top: 1px solid var(--line); margin-top: 16px; }
.siblings { line-height: 1.9; }
a.toggle { font-weight: 600; }
details.glossary { margin: 24px 0; border: 1px solid var(--line); padding: 6px 16px; background: var(--soft); }
details.glossary summary { cursor: pointer; font-weight: 700; }
details.glossary dl { margin: 8px 0; grid-template-columns: 11em 1fr; font-size: 13px; }
footer { max-width: 1200px; margin: 0 auto; padding: 12px 24px 24px; color: var(--muted); font-size: 12px; border-top: 1px solid var(--line); }
@media (max-width: 800px) { .summary, .cautions .cols { grid-template-columns: 1fr; } }
@media print { .verdict { -webkit-print-color-adjust: exact; print-color-adjust: exact; } nav { display: none; } }
""";
}
