import type { ApiProblem } from './problem.ts';

/** Names a request field for people: the form's own label when the field is on screen. */
export type LabelFor = (apiField: string) => string | undefined;

export interface ProblemText {
  /** One sentence or two: the problem's detail once, with the field named as the form names it. */
  summary: string;
  /** Field errors the summary does not already say, each named by its label (or its path). */
  more: { field: string; label: string; message: string }[];
}

/** Swaps a leading `field.path: ` for the form's label of that field. */
function relabel(text: string, labelFor: LabelFor): string {
  const at = text.indexOf(': ');
  if (at <= 0) return text;
  const label = labelFor(text.slice(0, at));
  return label ? `${label}: ${text.slice(at + 2)}` : text;
}

/**
 * The words the console shows for a problem: the detail once (the API's detail already quotes the
 * first field error, so that error is not repeated), then any further field errors.
 * @example problemText({ title: 'The input cannot be computed', detail: 'swr: below 1', errors: [{ field: 'swr', message: 'below 1' }], … }, () => 'SWR').summary // "SWR: below 1"
 */
export function problemText(problem: ApiProblem, labelFor: LabelFor = () => undefined): ProblemText {
  const errors = problem.errors ?? [];
  const summary = relabel(problem.detail || problem.title, labelFor);
  const more = errors
    .filter((e) => !problem.detail.includes(e.message))
    .map((e) => ({ field: e.field, label: (e.field && labelFor(e.field)) || e.field || 'the request', message: e.message }));
  return { summary, more };
}

/** One line for a notification: the summary, and up to three more field errors. */
export function problemLine(problem: ApiProblem, labelFor?: LabelFor): string {
  const { summary, more } = problemText(problem, labelFor);
  const extra = more.slice(0, 3).map((e) => `${e.label}: ${e.message}`);
  return extra.length > 0 ? `${summary} ${extra.join('; ')}` : summary;
}
