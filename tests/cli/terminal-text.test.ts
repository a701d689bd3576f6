/** Control characters in user text become visible escapes before they reach a terminal. */
import { describe, expect, it } from 'vitest';
import { visibleLines, visibleText } from '../../server/terminal-text.ts';

describe('visibleText and visibleLines', () => {
  it('ANSI escape sequences, BEL, DEL and C1 controls become \\u escapes', () => {
    expect(visibleText('a\u001b[2J\u001b[31mb\u0007c\u007fd\u009be')).toBe('a\\u001b[2J\\u001b[31mb\\u0007c\\u007fd\\u009be');
  });

  it('visibleText escapes newline, carriage return and tab too; visibleLines keeps only the newline', () => {
    expect(visibleText('one\ntwo\r\tthree')).toBe('one\\u000atwo\\u000d\\u0009three');
    expect(visibleLines('one\ntwo\r\tthree\n')).toBe('one\ntwo\\u000d\\u0009three\n');
  });

  it('every code point from U+0000 to U+00A0 except the newline is escaped by visibleLines; text beyond is untouched', () => {
    for (let c = 0; c <= 0xa0; c++) {
      const ch = String.fromCharCode(c);
      const control = c < 0x20 || (c >= 0x7f && c <= 0x9f);
      expect(visibleLines(ch), `U+${c.toString(16)}`).toBe(control && c !== 0x0a ? `\\u${c.toString(16).padStart(4, '0')}` : ch);
    }
    expect(visibleLines('µg/L, τ, ½, —, 日本')).toBe('µg/L, τ, ½, —, 日本');
  });

  it('JSON text passed through visibleLines parses to the same value (C1 characters may stand raw in JSON strings)', () => {
    const value = { title: 'x\u009b31m\u0085y\u007f', ids: ['a\u0007'] };
    const text = JSON.stringify(value, null, 2);
    expect(text).toMatch(/[\u007f-\u009f]/); // JSON.stringify leaves DEL and C1 raw
    const shown = visibleLines(text);
    expect(shown).not.toMatch(/[\u0000-\u0009\u000b-\u001f\u007f-\u009f]/);
    expect(JSON.parse(shown)).toEqual(value);
  });
});
