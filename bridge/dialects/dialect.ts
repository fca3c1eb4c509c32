import type { Duplex } from 'node:stream';
import type { DecimalMark } from '../../lib/validation/numbers';
import type { ParserOutput } from '../../lib/validation/readings';
import type { LineEncoding } from '../framing/lines';
import type { RecordFrame, RecordFraming } from '../framing/records';
import type { Log } from '../log';

/** Sends bytes back to the instrument (ACK, NAK, answers); absent where the link has no back channel. */
export type Reply = (bytes: Buffer) => void;

export interface StageOptions {
  encoding?: LineEncoding;
  /** True when the instrument's settings name the character set (not the dialect's default). */
  encodingChosen?: boolean;
  maxLineBytes?: number;
  /** Live link: idle gaps and protocol timeouts run. Off when reading a file in one go. */
  idle?: boolean;
  reply?: Reply;
  log?: Log;
  /** Who is talking, for log lines. */
  name?: string;
  /** A protocol problem a person should hear of (NAKed frames, abandoned sessions): link health. */
  onProblem?(message: string): void;
  /** The instrument's number format (Admin → Instruments); decimal point when not set. */
  decimalMark?: DecimalMark;
  /** The receiving application and facility we answer as (HL7 ACK MSH-3/4). */
  application?: string;
  facility?: string;
}

/** Per-instrument settings a parser needs; a parser stays pure given them. */
export interface ParseOptions {
  decimalMark?: DecimalMark;
  /** Passed on to the answer (HL7 ACK MSH-3/4); parsers ignore them. */
  application?: string;
  facility?: string;
}

export interface AnswerContext {
  now: Date;
  /** Counts the answers of one link, so each has its own control id. */
  sequence: number;
  /** How we name ourselves in answers (HL7 ACK MSH-3/4), as configured for the instrument. */
  application?: string;
  facility?: string;
}

/** One printout or message format: how its records are framed, and how one record is read. */
export interface Dialect {
  name: string;
  summary: string;
  /** Line-printed formats: how records are told apart (the shared line and record stages use it). */
  framing?: RecordFraming;
  /** Protocols: their own stages from bytes to records and fragments; they may answer through options.reply. */
  framer?(options: StageOptions): Duplex[];
  /** Pure: the same record always gives the same output, and bad input gives an unparsed fragment. */
  parse(record: RecordFrame, options?: ParseOptions): ParserOutput | ParserOutput[];
  /** Protocols that acknowledge each message once it is read (HL7 ACK): the bytes to send back. */
  answer?(record: RecordFrame, outputs: readonly ParserOutput[], context: AnswerContext): Buffer | undefined;
  /** Protocol control bytes that are normal on this link, not line noise (link health). */
  controlBytes?: readonly number[];
  /** Character set when the instrument's settings do not say. */
  defaultEncoding?: LineEncoding;
}
