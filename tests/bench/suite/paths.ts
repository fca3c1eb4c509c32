// The read paths the issue measures, as HTTP requests and as the lib calls behind them.
import type { Actor } from '@/lib/auth/guards';

/** The long record, and the readings on Intake's first page (what the board asks suggestions for). */
export interface PathIds {
  heavyPatientId: string;
  intakePage: string[];
}

export interface ReadPath {
  name: string;
  url: (ids: PathIds) => string;
  /** The lib call the route handler makes (for the in-process run that captures its SQL). */
  call: (actor: Actor, ids: PathIds) => Promise<unknown>;
}

export const PATIENT_QUERY = 'keeper 123';

export async function readPaths(): Promise<ReadPath[]> {
  const { suggestionsForUnassigned } = await import('@/lib/readings/suggestions');
  const { patientChart } = await import('@/lib/clinical/chart');
  const { CHART_PAGE } = await import('@/lib/clinical/chart-page');
  const { unreviewedResults } = await import('@/lib/clinical/review');
  const { searchPatients } = await import('@/lib/patients');
  const { listReadings } = await import('@/lib/readings/queries');
  const { db } = await import('@/db/client');
  const { sql } = await import('drizzle-orm');
  return [
    // What an Intake tab asks for: its page's readings (every waiting reading is weighed), and all of them.
    { name: 'Intake suggestions', url: (i) => `/api/readings/suggestions?readings=${i.intakePage.join(',')}`, call: (a, i) => suggestionsForUnassigned(a, 3, i.intakePage) },
    { name: 'Intake suggestions, every waiting reading', url: () => '/api/readings/suggestions', call: (a) => suggestionsForUnassigned(a) },
    // What the record's page loads: the newest page of results whole and a trend point for each of the 1,000.
    { name: '1,000-result chart', url: (i) => `/api/patients/${i.heavyPatientId}/results`, call: (a, i) => patientChart(a, i.heavyPatientId, { limit: CHART_PAGE }) },
    { name: 'Review list', url: () => '/api/reviews/unreviewed', call: (a) => unreviewedResults(a, false) },
    { name: 'patient search', url: () => `/api/patients?q=${encodeURIComponent(PATIENT_QUERY)}`, call: (a) => searchPatients(a, PATIENT_QUERY) },
    { name: 'Intake list', url: () => '/api/readings?status=unassigned', call: (a) => listReadings(a, { status: 'unassigned', limit: 100 }) },
    { name: 'health', url: () => '/api/health', call: async () => (await db()).execute(sql`select 1`) },
  ];
}
