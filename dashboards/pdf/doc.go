// Package pdf prints the HTML report to PDF with headless Chromium
// (chromedp): a fresh profile in a temporary folder, no background
// networking, the report's own page size and margins, and a footer with
// the title and page numbers. The browser is $DEWLINE_CHROMIUM when set,
// else chromium or Google Chrome on the PATH.
//
// It writes no file and never logs above debug: the caller writes the PDF
// it returns and reports errors, which name the HTML file already written.
package pdf
