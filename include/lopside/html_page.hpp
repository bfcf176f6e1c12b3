#pragma once
/// \file
/// The frame every HTML report shares: one self-contained page (inline CSS, inline SVG, a few
/// lines of inline script for hover read-outs that the page does not need to be read), our own
/// look, printable on A4. No external resource of any kind: no link, no font, no image URL.

#include <ostream>
#include <string>
#include <utility>
#include <vector>

namespace lopside::html {

/// Opens the page: doctype, <head> with the title, the style sheet and the content security
/// policy that forbids every request (default-src 'none'; inline styles and scripts allowed),
/// and the page header band with `title`, `subtitle` and the tool's name.
void page_begin(std::ostream& out, const std::string& title, const std::string& subtitle);
/// Closes the page: footer (`footer_text`, e.g. the sign convention and the schema), the
/// hover script, </body></html>.
void page_end(std::ostream& out, const std::string& footer_text);

/// A section with a heading (<section id=…><h2>…</h2>) and its end.
void section_begin(std::ostream& out, const std::string& id, const std::string& heading);
void section_end(std::ostream& out);

/// The verdict banner: `tone` is "pass", "warn", "fail" or "info"; `headline` in large type,
/// `lines` below it (already escaped HTML allowed: they are written as given).
void verdict_banner(std::ostream& out, const std::string& tone, const std::string& headline,
                    const std::vector<std::string>& lines);

/// The high-voltage caution box (text escaped).
void caution(std::ostream& out, const std::string& text);

/// A table: header cells and rows of cells, escaped; `numeric_from` is the first column
/// right-aligned as figures. `css_class` styles the table ("figures", "units", …).
void table(std::ostream& out, const std::vector<std::string>& header,
           const std::vector<std::vector<std::string>>& rows, std::size_t numeric_from = 1,
           const std::string& css_class = "figures");

/// The same with cells that are HTML already (escaped by the caller, e.g. a figure in a
/// <span data-key=… data-value=…>); the header is still escaped.
void table_html(std::ostream& out, const std::vector<std::string>& header,
                const std::vector<std::vector<std::string>>& rows, std::size_t numeric_from = 1,
                const std::string& css_class = "figures");

/// A definition list of key/value pairs (metadata), escaped.
void key_values(std::ostream& out, const std::vector<std::pair<std::string, std::string>>& pairs);

/// A bulleted list (warnings), escaped; nothing when empty.
void bullet_list(std::ostream& out, const std::vector<std::string>& items,
                 const std::string& css_class = "notes");

/// A row of charts side by side on screen, stacked in print (<div class="chart-row">).
void row_begin(std::ostream& out);
void row_end(std::ostream& out);

}  // namespace lopside::html
