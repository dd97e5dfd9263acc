/**
 * Chromium's header and footer templates of a statement PDF. Chromium
 * renders them from the strings given here, outside the page, so they carry
 * their own styles and every text from the book is escaped here. They cannot
 * load the page's web fonts (nor data: fonts), so they use a system sans
 * serif, which is embedded in the PDF like the rest. Long or
 * right-to-left names are isolated (<bdi>) and cut with an ellipsis instead
 * of pushing the page number away.
 */
import { PALETTE } from '../render/palette.ts';
import type { PrintHeader } from './index.ts';

/** Page margins of every statement: room for the header and footer. */
export const PAGE_MARGINS = { top: '20mm', bottom: '18mm', left: '16mm', right: '16mm' } as const;

const ESCAPES: Readonly<Record<string, string>> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/** Escapes text for HTML element content and quoted attributes. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (character) => ESCAPES[character]!);
}

const BOX = `font-family:'Liberation Sans','DejaVu Sans',sans-serif;font-size:7.5pt;color:${PALETTE.muted};`
  + `box-sizing:border-box;width:100%;padding:0 ${PAGE_MARGINS.right} 0 ${PAGE_MARGINS.left};display:flex;justify-content:space-between;align-items:baseline;gap:6mm;`
  + '-webkit-print-color-adjust:exact;';
const CELL = 'white-space:nowrap;overflow:hidden;text-overflow:ellipsis;min-width:0;';

/**
 * Header: firm on the left; client, account and period on the right. Only
 * the client name gives way (ellipsis): account and period always show.
 */
export function headerTemplate(header: PrintHeader): string {
  return `<div style="${BOX}padding-top:2mm;">`
    + `<span style="${CELL}flex:0 1 38%;font-weight:600;color:${PALETTE.brand};">${escapeHtml(header.firm)}</span>`
    + '<span style="display:flex;justify-content:flex-end;flex:0 1 62%;min-width:0;">'
    + `<span style="${CELL}flex:0 1 auto;"><bdi>${escapeHtml(header.client)}</bdi></span>`
    + `<span style="white-space:nowrap;flex:0 0 auto;">&nbsp;· ${escapeHtml(header.account)} · ${escapeHtml(header.period)}</span>`
    + '</span></div>';
}

/** Footer: what the document is on the left, "Page x of y" on the right. */
export function footerTemplate(header: PrintHeader): string {
  return `<div style="${BOX}padding-bottom:2mm;">`
    + `<span style="${CELL}flex:1 1 auto;">Statement ${escapeHtml(header.period)} · account ${escapeHtml(header.account)} · information, not personal advice</span>`
    + '<span style="white-space:nowrap;flex:0 0 auto;">Page <span class="pageNumber"></span> of <span class="totalPages"></span></span>'
    + '</div>';
}
