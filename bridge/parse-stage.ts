import { Transform, type TransformCallback } from 'node:stream';
import { parserOutputSchema, type ParserOutput } from '../lib/validation/readings';
import type { Dialect } from './dialects';
import { LineSplitter, type LineEncoding } from './framing/lines';
import { RecordFramer, type FramerOutput } from './framing/records';
import { fragments } from './fragments';

/** Frames → readings or unparsed fragments. Whatever goes wrong, the text comes out as a fragment. */
export class ParseStage extends Transform {
  constructor(private readonly dialect: Dialect) {
    super({ objectMode: true });
  }

  override _transform(frame: FramerOutput, _encoding: BufferEncoding, callback: TransformCallback): void {
    for (const output of parseFrame(this.dialect, frame)) this.push(output);
    callback();
  }
}

/** One frame through the dialect, every output checked against the contract before it moves on. */
export function parseFrame(dialect: Dialect, frame: FramerOutput): ParserOutput[] {
  let output: ParserOutput;
  try {
    output = frame.kind === 'record' ? dialect.parse(frame) : frame;
  } catch (error) {
    return fragments(frame.raw, `${dialect.name} parser failed: ${error instanceof Error ? error.message : String(error)}`);
  }
  const checked = parserOutputSchema.safeParse(output);
  if (checked.success) return [checked.data];
  const issue = checked.error.issues[0];
  return fragments(frame.raw, `does not fit the contract: ${issue?.path.join('.')} ${issue?.message}`);
}

export interface ParsingOptions {
  encoding?: LineEncoding;
  maxLineBytes?: number;
  /** Give up unfinished records after the dialect's idle gap; off when reading a file in one go. */
  idle?: boolean;
}

/** bytes → lines → records → readings/fragments, as three stream stages to pipe in order. */
export function createParsingStages(dialect: Dialect, options: ParsingOptions = {}): [LineSplitter, RecordFramer, ParseStage] {
  const framing = { ...dialect.framing, idleMs: options.idle === false ? undefined : dialect.framing.idleMs };
  return [
    new LineSplitter({ encoding: options.encoding, maxLineBytes: options.maxLineBytes }),
    new RecordFramer(framing),
    new ParseStage(dialect),
  ];
}
