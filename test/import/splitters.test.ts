/**
 * The streaming splitters. CSV follows RFC 4180 (Shafranovich 2005, "Common Format and MIME Type
 * for Comma-Separated Values (CSV) Files"), §2, whose rules are cited case by case; JSON Lines is
 * one value per LF-terminated line. Every case is also fed in two chunks split at every position,
 * since the file arrives in chunks that may cut anywhere: inside a quote, between CR and LF.
 */
import { describe, expect, it } from 'vitest';
import { CsvSplitter, type CsvRecord } from '../../src/import/csv.ts';
import { LineSplitter } from '../../src/import/lines.ts';

function splitCsv(chunks: string[]): CsvRecord[] {
  const s = new CsvSplitter();
  const out: CsvRecord[] = [];
  for (const c of chunks) s.push(c, (r) => out.push(r));
  s.end((r) => out.push(r));
  return out;
}

/** The same records whatever the chunking: whole, and cut in two at every position. */
function csvEverySplit(text: string): CsvRecord[] {
  const whole = splitCsv([text]);
  for (let at = 0; at <= text.length; at++) expect(splitCsv([text.slice(0, at), text.slice(at)]), `cut at ${at}`).toEqual(whole);
  // And one character at a time, the worst chunking there is.
  expect(splitCsv([...text])).toEqual(whole);
  return whole;
}

const fieldsOf = (text: string) => csvEverySplit(text).map((r) => r.fields);

describe('CSV records after RFC 4180 §2', () => {
  it('rule 1: records end in CRLF; a bare LF and a bare CR end them too', () => {
    expect(fieldsOf('aaa,bbb,ccc\r\nzzz,yyy,xxx\r\n')).toEqual([['aaa', 'bbb', 'ccc'], ['zzz', 'yyy', 'xxx']]);
    expect(fieldsOf('aaa,bbb\nzzz,yyy\n')).toEqual([['aaa', 'bbb'], ['zzz', 'yyy']]);
    expect(fieldsOf('aaa,bbb\rzzz,yyy\r')).toEqual([['aaa', 'bbb'], ['zzz', 'yyy']]);
  });

  it('rule 2: the last record need not end in a line break', () => {
    expect(fieldsOf('aaa,bbb,ccc\r\nzzz,yyy,xxx')).toEqual([['aaa', 'bbb', 'ccc'], ['zzz', 'yyy', 'xxx']]);
  });

  it('rule 4: spaces are part of a field; empty fields, also a last one after a comma, are kept', () => {
    expect(fieldsOf(' a , b ,\r\n,,\r\n')).toEqual([[' a ', ' b ', ''], ['', '', '']]);
    expect(fieldsOf('a,,b')).toEqual([['a', '', 'b']]);
  });

  it('rule 5: a field may be enclosed in double quotes', () => {
    expect(fieldsOf('"aaa","bbb",ccc\r\n')).toEqual([['aaa', 'bbb', 'ccc']]);
    expect(fieldsOf('"",x')).toEqual([['', 'x']]);
  });

  it('rule 6: quoted fields hold commas, CRLF, LF and CR', () => {
    expect(fieldsOf('"a,b",c\r\n"line 1\r\nline 2",d\r\n"e\nf","g\rh"\r\n')).toEqual([['a,b', 'c'], ['line 1\r\nline 2', 'd'], ['e\nf', 'g\rh']]);
  });

  it('rule 7: a double quote inside a quoted field is written twice', () => {
    expect(fieldsOf('"aaa","b""bb","ccc"\r\n')).toEqual([['aaa', 'b"bb', 'ccc']]);
    expect(fieldsOf('"""",""""""\r\n')).toEqual([['"', '""']]);
  });

  it('skips blank lines, and numbers each record by the line it starts on, counting the lines inside quotes', () => {
    const records = csvEverySplit('h1,h2\r\n\r\n"a\r\nb\r\nc",1\r\nx,2\n\ny,"3\n"\nz,4');
    expect(records.map((r) => [r.fields, r.line, r.lastLine])).toEqual([
      [['h1', 'h2'], 1, 1],
      [['a\r\nb\r\nc', '1'], 3, 5],
      [['x', '2'], 6, 6],
      [['y', '3\n'], 8, 9],
      [['z', '4'], 10, 10],
    ]);
    expect(records.every((r) => r.problem === null)).toBe(true);
  });

  it('flags a record that breaks the rules, and goes on with the next', () => {
    const records = csvEverySplit('a,b"c,d\r\n"x"y,z\r\nok,1\r\n"never closed,2\r\nmore\r\n');
    expect(records.map((r) => [r.line, r.problem])).toEqual([
      [1, expect.stringContaining('a double quote inside unquoted field 2')],
      [2, expect.stringContaining('text after the closing quote of field 1')],
      [3, null],
      [4, 'a quoted field opened on line 4 never closes (the file ends inside it)'],
    ]);
    expect(records[2].fields).toEqual(['ok', '1']);
  });
});

describe('JSON Lines', () => {
  function splitLines(chunks: string[]): [string, number][] {
    const s = new LineSplitter();
    const out: [string, number][] = [];
    for (const c of chunks) s.push(c, (t, n) => out.push([t, n]));
    s.end((t, n) => out.push([t, n]));
    return out;
  }

  it('gives each line with its number, LF or CRLF, the last without a line end, whatever the chunks', () => {
    const text = '{"a":1}\r\n{"b":"x\\ny"}\n\n{"c":3}';
    const whole = splitLines([text]);
    expect(whole).toEqual([['{"a":1}', 1], ['{"b":"x\\ny"}', 2], ['', 3], ['{"c":3}', 4]]);
    for (let at = 0; at <= text.length; at++) expect(splitLines([text.slice(0, at), text.slice(at)]), `cut at ${at}`).toEqual(whole);
    expect(splitLines([...text])).toEqual(whole);
  });
});
