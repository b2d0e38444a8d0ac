// The printed sheet shared by the sensor report's print page and the project verification report
// (issue 13: one copy instead of two). The report is paper: always the daylight colours, whatever
// theme the screen uses (the charts take their colours from the sheet when drawn, so they print
// black on white too). Page numbers come from the page-margin boxes of CSS Paged Media
// (counter(page), counter(pages)); Chromium draws them since version 131, in print preview and in
// print-to-PDF alike.

/** A CSS string literal (for the running footer's content). */
export const cssString = (t: string) =>
  `"${t
    .replace(/[\\"]/g, (c) => `\\${c}`)
    .replace(/[\r\n]+/g, " ")
    .replace(/[<>]/g, "")}"`;

/**
 * The sheet's CSS with `footer` in the bottom-left page margin; `screen` and `print` add the page's
 * own rules (heading sizes, what must not break) to the shared ones.
 */
export function printSheetCss(footer: string, own: { screen?: string; print?: string } = {}) {
  return `
.print-paper { --bg: #ffffff; --surface: #ffffff; --fg: #000000; --muted: #333a45; --border: #555b66; --accent: #0b4fb3; --pass: #0a6b2d; --fail: #b3001b; --warn: #8a4b00; background: var(--bg); color: var(--fg); padding: 16px; border-radius: 8px; }
/* on screen the sheet is exactly as wide as the printed text block (A4 less the side margins), so the
   charts, drawn once in the browser, already have their paper width when the page is printed */
.print-paper { width: 186mm; max-width: 100%; box-sizing: content-box; }
${own.screen ?? ""}
@page {
  size: A4;
  margin: 14mm 12mm 16mm;
  @bottom-left { content: ${cssString(footer)}; font-family: "Atkinson Hyperlegible", system-ui, sans-serif; font-size: 8.5pt; color: #333a45; }
  @bottom-right { content: "page " counter(page) " of " counter(pages); font-family: "Atkinson Hyperlegible", system-ui, sans-serif; font-size: 9pt; font-weight: bold; color: #000; }
}
@media print {
  .print-page { font-size: 10.5pt; padding: 0; }
  .print-page h1 { font-size: 18pt; }
  .print-page .card { border-color: #000; background: #fff; }
  main#main { max-width: none; padding: 0; }
${own.print ?? ""}
}
`;
}
