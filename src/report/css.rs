//! The reports' one style sheet, inlined into every page. Plain and legible on screen and on
//! A4 paper; colour is a second cue only, after the words and the marker shapes.

pub const CSS: &str = r#":root{--ink:#1c2226;--muted:#55606a;--rule:#d5dade;--panel:#f3f5f4;--accent:#0f5257;
--exceeds:#9b1c31;--exceeds-bg:#fbecef;--approaching:#7a4b00;--approaching-bg:#fdf3e1;
--changed:#1f4e8c;--changed-bg:#ecf2fb;--ok:#2f5d46;--ok-bg:#eef5f0}
*{box-sizing:border-box}
html{font-size:15px}
body{margin:0;color:var(--ink);background:#fff;font-family:"Liberation Sans","DejaVu Sans",Arial,Helvetica,sans-serif;line-height:1.45}
.page{max-width:62rem;margin:0 auto;padding:1.5rem 1.5rem 3rem}
a{color:var(--accent)}
h1,h2,h3{line-height:1.2;margin:0}
h1{font-size:1.7rem;font-weight:700}
h2{font-size:1.25rem;margin:2.2rem 0 .8rem;padding-bottom:.3rem;border-bottom:2px solid var(--accent)}
h3{font-size:1.05rem;margin:0 0 .4rem}
p{margin:.4rem 0}
.masthead{display:flex;flex-wrap:wrap;justify-content:space-between;gap:1rem 2rem;padding-bottom:1rem;border-bottom:1px solid var(--rule)}
.masthead .what{font-size:.85rem;letter-spacing:.04em;text-transform:uppercase;color:var(--accent);font-weight:700;margin:0 0 .3rem}
.masthead .ref{display:inline-block;margin-top:.4rem;font-weight:700;font-size:.95rem;padding:.05rem .45rem;border:1px solid var(--ink);border-radius:3px}
.facts{display:grid;grid-template-columns:auto auto;gap:.15rem 1rem;margin:0;font-size:.9rem;align-content:start}
.facts dt{color:var(--muted)}
.facts dd{margin:0;font-weight:600}
.verdict{margin:1.4rem 0 1rem;padding:1rem 1.2rem;border-radius:6px;border-left:8px solid var(--ok);background:var(--ok-bg)}
.verdict p.headline{font-size:1.3rem;font-weight:700;margin:0}
.verdict.sev-exceeds{border-color:var(--exceeds);background:var(--exceeds-bg)}
.verdict.sev-approaching{border-color:var(--approaching);background:var(--approaching-bg)}
.verdict.sev-changed{border-color:var(--changed);background:var(--changed-bg)}
.tally{display:grid;grid-template-columns:repeat(4,1fr);gap:.6rem;margin:0 0 1.2rem;padding:0;list-style:none}
.tally li{border:1px solid var(--rule);border-radius:6px;padding:.5rem .7rem;display:flex;align-items:baseline;gap:.5rem}
.tally .n{font-size:1.6rem;font-weight:700}
.tally .w{font-size:.9rem}
.mark{font-style:normal;font-weight:700;display:inline-block;width:1.1em;text-align:center}
.sev-exceeds .mark,.mark.sev-exceeds{color:var(--exceeds)}
.sev-approaching .mark,.mark.sev-approaching{color:var(--approaching)}
.sev-changed .mark,.mark.sev-changed{color:var(--changed)}
.sev-none .mark,.mark.sev-none{color:var(--ok)}
.next{margin:0;padding:0;list-style:none;counter-reset:step}
.next li{counter-increment:step;display:grid;grid-template-columns:2rem 1fr;gap:.1rem .5rem;padding:.55rem 0;border-top:1px solid var(--rule)}
.next li::before{content:counter(step);font-weight:700;font-size:1.1rem;color:var(--accent)}
.next .when{grid-column:2;font-weight:700}
.badge{display:inline-block;font-size:.85rem;font-weight:700;padding:.1rem .5rem;border-radius:999px;border:1.5px solid currentColor;white-space:nowrap}
.badge.sev-exceeds{color:var(--exceeds);background:var(--exceeds-bg)}
.badge.sev-approaching{color:var(--approaching);background:var(--approaching-bg)}
.badge.sev-changed{color:var(--changed);background:var(--changed-bg)}
.badge.sev-none{color:var(--ok);background:var(--ok-bg)}
.badge .mark{color:inherit}
.finding{border:1px solid var(--rule);border-left-width:6px;border-radius:6px;padding:.9rem 1rem;margin:0 0 1rem;break-inside:avoid}
.finding.sev-exceeds{border-left-color:var(--exceeds)}
.finding.sev-approaching{border-left-color:var(--approaching)}
.finding.sev-changed{border-left-color:var(--changed)}
.finding header{display:flex;flex-wrap:wrap;gap:.4rem 1rem;align-items:baseline;justify-content:space-between;margin-bottom:.3rem}
.finding .sub{color:var(--muted);font-size:.9rem}
.finding .reason{font-size:1rem}
.finding figure{margin:.6rem 0 0;break-inside:avoid}
.finding figcaption{font-size:.82rem;color:var(--muted)}
svg{max-width:100%;height:auto;display:block}
table{border-collapse:collapse;width:100%;font-size:.85rem;margin:.3rem 0 .6rem}
caption{text-align:left;font-weight:700;font-size:1rem;padding:.2rem 0 .4rem}
th,td{padding:.3rem .45rem;border-bottom:1px solid var(--rule);vertical-align:top;text-align:left}
thead th{border-bottom:2px solid var(--ink);font-size:.8rem}
td.num,th.num{text-align:right;font-variant-numeric:tabular-nums}
td .m{display:block;font-size:.75rem;color:var(--muted);white-space:nowrap}
td .m.past{color:var(--exceeds);font-weight:700}
td.circ b{display:block}
td.circ span{display:block;font-size:.78rem;color:var(--muted)}
tr{break-inside:avoid}
.notes{font-size:.82rem;color:var(--muted);margin:.2rem 0 1rem;padding-left:1.2rem}
.obs{margin:.2rem 0 0;padding:0;list-style:none}
.obs li{margin:.15rem 0}
.code{font-family:"Liberation Mono","DejaVu Sans Mono",monospace;font-weight:700;border:1px solid var(--ink);border-radius:3px;padding:0 .3rem;margin-right:.3rem}
.small{font-size:.85rem;color:var(--muted)}
.method dl{margin:0}
.method dt{font-weight:700;margin-top:.6rem}
.method dd{margin:.1rem 0 0}
.cautions{border:2px solid var(--ink);border-radius:6px;padding:.8rem 1.1rem;margin:2rem 0 1rem;break-inside:avoid}
.cautions h2{border:0;margin:0 0 .4rem;padding:0}
.cautions ul{margin:0;padding-left:1.2rem}
footer{margin-top:2rem;font-size:.8rem;color:var(--muted);border-top:1px solid var(--rule);padding-top:.6rem}
.key{display:flex;flex-wrap:wrap;gap:.3rem 1.2rem;font-size:.82rem;color:var(--muted);margin:.2rem 0 .8rem;padding:0;list-style:none}
.rank{font-weight:700;color:var(--muted)}
td.prop{min-width:13rem}
td.next-date{min-width:7.5rem}
td.circ{min-width:9.5rem}
.part{break-inside:avoid}
.letterhead{display:flex;gap:.4rem 1rem;align-items:center;margin:0 0 .8rem}
.letterhead img.logo{max-height:3.2rem;max-width:12rem}
.letterhead p{margin:0;font-size:.85rem;color:var(--muted)}
.letterhead p.name{font-size:1.05rem;font-weight:700;color:var(--ink)}
.brief .flag{margin:.15rem 0;padding-left:.4rem;border-left:4px solid var(--exceeds);font-weight:600}
.brief .circuit{break-inside:avoid;margin-bottom:.6rem}
.brief td.basis{font-size:.78rem;color:var(--muted)}
.brief td.box{min-width:22mm;border:1px solid var(--ink)}
ol.first li{margin:.2rem 0}
@page{size:A4;margin:14mm 12mm 16mm}
@media print{
html{font-size:8.6pt}
.page{max-width:none;padding:0}
a{color:inherit;text-decoration:none}
h2{break-after:avoid;page-break-after:avoid}
h3,caption,.finding header,.finding .sub{break-after:avoid;page-break-after:avoid}
.verdict,.cautions,figure,tr,.part,.brief .circuit{break-inside:avoid;page-break-inside:avoid}
.finding{break-inside:auto}
.finding figure svg{max-width:56%;margin:0 auto}
.finding figcaption{text-align:center}
.masthead{flex-wrap:nowrap}
.tally{grid-template-columns:repeat(4,minmax(0,1fr))}
h2{margin-top:.9rem;margin-bottom:.5rem}
.method,.boards>p.small,.visits>p.small,.remedials>p.small{font-size:.8rem}
.method table{font-size:.7rem}
.method dt{margin-top:.35rem}
.verdict{margin:.8rem 0 .7rem;padding:.6rem .9rem}
.finding{padding:.6rem .8rem;margin-bottom:.7rem}
.cautions{margin:1.2rem 0 .6rem}
table{font-size:.76rem}
th,td{padding:.18rem .32rem}
.facts{font-size:.82rem;gap:.1rem 1rem}
p{margin:.3rem 0}
footer{margin-top:.8rem;padding-top:.3rem}
.visits td:nth-child(3){white-space:nowrap}
.visits td:nth-child(6){width:31%}
td .m{white-space:normal}
td.circ{min-width:8.5rem;width:22%}
thead{display:table-header-group}
.verdict,.badge,.tally li{-webkit-print-color-adjust:exact;print-color-adjust:exact}
}
@media (max-width:640px){.tally{grid-template-columns:repeat(2,1fr)}}
"#;
