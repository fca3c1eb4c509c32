import type { ParserOutput } from '../../lib/validation/readings';
import type { RecordFrame, RecordFraming } from '../framing/records';

/** One printout or message format: how its records are framed, and how one record is read. */
export interface Dialect {
  name: string;
  summary: string;
  framing: RecordFraming;
  /** Pure: the same record always gives the same output, and bad input gives an unparsed fragment. */
  parse(record: RecordFrame): ParserOutput;
}
