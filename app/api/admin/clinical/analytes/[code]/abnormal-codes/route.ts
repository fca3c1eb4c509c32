import { requireActor } from '@/lib/auth/guards';
import { setAbnormalCodes } from '@/lib/clinical/config';
import { apiRoute, json, readJson } from '@/lib/http';
import { abnormalCodesSchema, analyteCodeParam } from '@/lib/validation/clinical';

type Ctx = { params: Promise<{ code: string }> };

/** The codes that mean abnormal for a test's coded results (Admin → Results and matching). */
export const PUT = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageClinic');
  const code = analyteCodeParam.parse((await params).code);
  const input = await readJson(request, abnormalCodesSchema);
  return json({ analyte: await setAbnormalCodes(actor, code, input) });
});
