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
  'settings.updated',
] as const;

export type LiveEventType = (typeof LIVE_EVENT_TYPES)[number];

export interface LiveEvent {
  type: LiveEventType;
  clinicId: string;
  id: string;
  at: string;
  /** Present when the change concerns one patient's record (so open charts know to refresh). */
  patientId?: string;
  /** Present when one staff member should be told (a critical result for the attending veterinarian). */
  userId?: string;
}
