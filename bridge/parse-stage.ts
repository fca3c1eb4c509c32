import { Transform, type Duplex, type TransformCallback } from 'node:stream';
import { parserOutputSchema, type ParserOutput } from '../lib/validation/readings';
import type { Dialect, ParseOptions, Reply, StageOptions } from './dialects/dialect';
import { LineSplitter } from './framing/lines';
import { RecordFramer, type FramerOutput } from './framing/records';
import { fragments } from './fragments';
import { errorMessage, silentLog, type Log } from './log';

export interface ParseStageOptions {
  /** Where a dialect's answer to each message goes (HL7 ACK); none, no answers. */
  reply?: Reply;
  log?: Log;
  now?: () => Date;
  /** The instrument's settings the parser reads with (number format). */
  parse?: ParseOptions;
}

/** Frames → readings or unparsed fragments. Whatever goes wrong, the text comes out as a fragment. */
export class ParseStage extends Transform {
  private answers = 0;

  constructor(
    private readonly dialect: Pick<Dialect, 'name' | 'parse' | 'answer'>,
    private readonly options: ParseStageOptions = {},
  ) {
    super({ objectMode: true });
  }

  override _transform(frame: FramerOutput, _encoding: BufferEncoding, callback: TransformCallback): void {
    const outputs = parseFrame(this.dialect, frame, this.options.parse);
    for (const output of outputs) this.push(output);
    if (frame.kind === 'record' && this.dialect.answer && this.options.reply) {
      try {
        const answer = this.dialect.answer(frame, outputs, {
          now: (this.options.now ?? (() => new Date()))(),
          sequence: ++this.answers,
          application: this.options.parse?.application,
          facility: this.options.parse?.facility,
        });
        if (answer) this.options.reply(answer);
      } catch (error) {
        // The message is kept either way; without an answer the sender will send it again.
        (this.options.log ?? silentLog).error(`${this.dialect.name}: could not answer a message: ${errorMessage(error)}`);
      }
    }
    callback();
  }
}

/** One frame through the dialect, every output checked against the contract before it moves on. */
export function parseFrame(dialect: Pick<Dialect, 'name' | 'parse'>, frame: FramerOutput, options?: ParseOptions): ParserOutput[] {
  let outputs: ParserOutput[];
  try {
    const parsed = frame.kind === 'record' ? dialect.parse(frame, options) : frame;
    outputs = Array.isArray(parsed) ? parsed : [parsed];
  } catch (error) {
    return fragments(frame.raw, `${dialect.name} parser failed: ${error instanceof Error ? error.message : String(error)}`);
  }
  if (outputs.length === 0) return fragments(frame.raw, `${dialect.name} found nothing to read`);
  return outputs.flatMap((output) => {
    const checked = parserOutputSchema.safeParse(output);
    if (checked.success) return [checked.data];
    const issue = checked.error.issues[0];
    return fragments(output.raw ?? frame.raw, `does not fit the contract: ${issue?.path.join('.')} ${issue?.message}`);
  });
}

export type ParsingOptions = StageOptions;

/** bytes → (lines → records | a protocol's framer) → readings/fragments, as stream stages to pipe in order. */
export function createParsingStages(dialect: Dialect, options: ParsingOptions = {}): Duplex[] {
  const live = options.idle !== false;
  const encoding = options.encoding ?? dialect.defaultEncoding;
  // Whether a person chose the character set (then it overrides what a message says of itself, e.g. HL7 MSH-18).
  const encodingChosen = options.encoding !== undefined;
  const parse = new ParseStage(dialect, { reply: options.reply, log: options.log, parse: { decimalMark: options.decimalMark, application: options.application, facility: options.facility } });
  if (dialect.framer) return [...dialect.framer({ ...options, encoding, encodingChosen }), parse];
  if (!dialect.framing) throw new Error(`dialect ${dialect.name} has neither a record framing nor a framer`);
  const framing = { ...dialect.framing, idleMs: live ? dialect.framing.idleMs : undefined, gapMs: live ? dialect.framing.gapMs : undefined };
  return [
    new LineSplitter({ encoding, maxLineBytes: options.maxLineBytes, releaseCrAfterMs: live ? 200 : undefined }),
    new RecordFramer(framing),
    parse,
  ];
}
