// Live events: small notices that something changed. Clients refetch what they may see.
export const LIVE_CHANNEL = 'benchwire_events';

export const LIVE_EVENT_TYPES = [
  'reading.created',
  'reading.assigned',
  'reading.voided',
  'capture.created',
  'capture.updated',
  'reading.reassigned',
  'reading.split',
  'order.created',
  'order.updated',
  'review.created',
  'alert.created',
  'alert.acknowledged',
  'alert.escalated',
  'mail.updated',
  'report.sent',
  'staff.duty-changed',
  'settings.updated',
  'patient.updated',
  'quality.updated',
  'instrument.health',
] as const;

export type LiveEventType = (typeof LIVE_EVENT_TYPES)[number];

export interface LiveEvent {
  type: LiveEventType;
  clinicId: string;
  id: string;
  at: string;
  /**
   * A bridge's batch: every new id (id is the first of them). One event per batch instead of one per
   * reading; a client that only reads `id` still refetches correctly, since events say what changed, not what it is.
   */
  ids?: string[];
  /** Present when the change concerns one patient's record (so open charts know to refresh). */
  patientId?: string;
  /** Present when one staff member should be told (a critical result for the attending veterinarian). */
  userId?: string;
}
