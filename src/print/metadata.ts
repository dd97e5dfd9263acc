/**
 * Document metadata of a printed statement, set with pdf-lib: title (shown
 * in the viewer's title bar), author, subject, language, creator and
 * producer. Chromium stamps the time of printing as CreationDate and
 * ModDate; both are removed so two prints of the same statement are
 * byte-identical (the statement's own dates are in its text).
 */
import { PDFArray, PDFDict, PDFDocument, PDFHexString, PDFName, PDFString, type PDFObject } from 'pdf-lib';

export interface PdfMetadata {
  readonly title: string;
  readonly author: string;
  readonly subject: string;
  /** BCP 47 language of the text; default "en". */
  readonly language?: string;
}

export const PDF_CREATOR = 'quarterline';

/** Returns the PDF with its metadata set and its dates removed. */
export async function finishPdf(bytes: Uint8Array, metadata: PdfMetadata): Promise<Uint8Array> {
  const document = await PDFDocument.load(bytes, { updateMetadata: false });
  document.setTitle(metadata.title, { showInWindowTitleBar: true });
  document.setAuthor(metadata.author);
  document.setSubject(metadata.subject);
  document.setCreator(PDF_CREATOR);
  document.setProducer(PDF_CREATOR);
  document.setLanguage(metadata.language ?? 'en');
  const info = document.context.lookup(document.context.trailerInfo.Info);
  if (info instanceof PDFDict) {
    info.delete(PDFName.of('CreationDate'));
    info.delete(PDFName.of('ModDate'));
  }
  repairOutline(document);
  renumberStructureIds(document);
  return document.save({ useObjectStreams: false, addDefaultPage: false, updateFieldAppearances: false });
}

/**
 * Chromium (as of 14x) records a heading twice in the document outline
 * when it moves the heading to the next page to keep it with what follows
 * (CSS break-after: avoid): "ActivityActivity". A title that is exactly
 * one text repeated twice is reduced to that text; nothing else changes.
 */
export function repairOutline(document: PDFDocument): number {
  const outlines = document.catalog.lookupMaybe(PDFName.of('Outlines'), PDFDict);
  if (!outlines) return 0;
  let repaired = 0;
  const visit = (item: PDFDict | undefined, depth: number): void => {
    // A malformed outline could loop; statements have a few dozen entries at most.
    for (let count = 0; item && count < 10_000 && depth < 32; count++) {
      const title = item.lookup(PDFName.of('Title'));
      if (title instanceof PDFString || title instanceof PDFHexString) {
        const text = title.decodeText();
        const half = text.length / 2;
        if (text.length > 0 && Number.isInteger(half) && text.slice(0, half) === text.slice(half)) {
          item.set(PDFName.of('Title'), PDFHexString.fromText(text.slice(0, half)));
          repaired++;
        }
      }
      visit(item.lookupMaybe(PDFName.of('First'), PDFDict), depth + 1);
      item = item.lookupMaybe(PDFName.of('Next'), PDFDict);
    }
  };
  visit(outlines.lookupMaybe(PDFName.of('First'), PDFDict), 0);
  return repaired;
}

/** Chromium's structure element ids: the DOM node's number in the renderer. */
const STRUCTURE_ID = /^node\d+$/;

/**
 * Chromium names each element of a tagged PDF's structure tree after its
 * DOM node number (`/ID (node00009173)`), which depends on what the same
 * page printed before; so the same statement printed after different ones
 * would differ. The ids are renumbered in their own order (node00000001,
 * …), wherever they occur (elements, the /IDTree name tree, table
 * /Headers), which keeps the name tree sorted and every reference intact.
 * Returns how many ids were renumbered.
 */
export function renumberStructureIds(document: PDFDocument): number {
  const found = new Set<string>();
  const textOf = (value: PDFObject): string | null =>
    value instanceof PDFString || value instanceof PDFHexString ? value.decodeText() : null;
  const walk = (value: PDFObject, visit: (holder: PDFDict | PDFArray, key: PDFName | number, text: string) => void): void => {
    if (value instanceof PDFDict) {
      for (const [key, entry] of value.entries()) {
        const text = textOf(entry);
        if (text !== null && STRUCTURE_ID.test(text)) visit(value, key, text);
        else walk(entry, visit);
      }
    } else if (value instanceof PDFArray) {
      for (let index = 0; index < value.size(); index++) {
        const entry = value.get(index);
        const text = textOf(entry);
        if (text !== null && STRUCTURE_ID.test(text)) visit(value, index, text);
        else walk(entry, visit);
      }
    }
  };
  const objects = document.context.enumerateIndirectObjects().map(([, object]) => object);
  for (const object of objects) walk(object, (_holder, _key, text) => found.add(text));
  const ordered = [...found].sort((a, b) => Number(a.slice(4)) - Number(b.slice(4)));
  const renamed = new Map(ordered.map((id, index) => [id, `node${String(index + 1).padStart(8, '0')}`]));
  for (const object of objects) {
    walk(object, (holder, key, text) => {
      const replacement = PDFString.of(renamed.get(text)!);
      if (holder instanceof PDFDict) holder.set(key as PDFName, replacement);
      else holder.set(key as number, replacement);
    });
  }
  return renamed.size;
}
