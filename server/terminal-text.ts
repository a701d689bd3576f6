/**
 * User text on its way to a terminal: a title or a label holding "\u001b[2J" would clear
 * the screen, a BEL would ring, a carriage return could overwrite a line already printed.
 * Every C0 control, DEL and every C1 control is shown instead as a visible escape in the
 * form JSON uses (ESC becomes the six characters `\u001b`), so that JSON text passed through
 * stays valid JSON with the same content (C1 characters may stand raw inside JSON strings;
 * their escape means the same string).
 */

const allControls = /[\u0000-\u001f\u007f-\u009f]/g;
// Newline excepted: what the command line prints is made of lines.
const controlsButNewline = /[\u0000-\u0009\u000b-\u001f\u007f-\u009f]/g;

function escape(c: string): string {
  return `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`;
}

/** One piece of user text inside a line (a file name, a title, a problem message): every control character escaped, newline included. */
export function visibleText(text: string): string {
  return text.replace(allControls, escape);
}

/** Whole output on its way to stdout or stderr: every control character escaped except the newlines that separate its lines. */
export function visibleLines(text: string): string {
  return text.replace(controlsButNewline, escape);
}
