/** Errors of the render stage (templates, charts, assets). */
import { QuarterlineError } from '../errors.ts';

/** A statement or the overview could not be rendered; the message names the account or template. */
export class RenderError extends QuarterlineError {}
