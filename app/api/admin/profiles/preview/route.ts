import { previewProfile } from '@/bridge/dialects/profile';
import { requireActor } from '@/lib/auth/guards';
import { BODY_LIMITS, apiRoute, json, readJson } from '@/lib/http';
import { previewProfileSchema } from '@/lib/validation/profile';

/**
 * Runs the bridge's own profile engine on a pasted printout, so what the editor shows is what the bridge
 * will send: every reading with the fields that made it, and every part left unread, in order.
 */
export const POST = apiRoute(async (request) => {
  await requireActor(request, 'manageClinic');
  const { definition, sample } = await readJson(request, previewProfileSchema, { limit: BODY_LIMITS.large, text: 'instrument' });
  const preview = previewProfile(definition, sample);
  const fieldsOf = new Map(preview.records.flatMap((record) => record.outputs.map((output) => [output, record.fields] as const)));
  const items = preview.outputs.map((output) =>
    output.kind === 'unparsed'
      ? { kind: 'unparsed' as const, raw: output.raw, reason: output.reason }
      : {
          kind: 'reading' as const,
          raw: output.raw,
          fields: fieldsOf.get(output) ?? {},
          reading: {
            analyte: output.analyte,
            value: output.value,
            comparator: output.comparator,
            unit: output.unit,
            sampleId: output.sampleId,
            measuredAt: output.measuredAt,
            flags: output.flags,
          },
          control: output.specimenRole === 'control' ? { level: output.controlLevel ?? null } : null,
        },
  );
  return json({ items });
});
