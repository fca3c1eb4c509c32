import { requireActor } from '@/lib/auth/guards';
import { apiRoute, json, readJson } from '@/lib/http';
import { markReadingAsControl, setReadingControlMaterial } from '@/lib/quality/store';
import { idParam } from '@/lib/validation/api';
import { markControlSchema, setControlMaterialSchema } from '@/lib/validation/quality';

type Ctx = { params: Promise<{ readingId: string }> };

/** Intake: this waiting reading was a QC control run; it leaves Intake and never goes on a patient. */
export const POST = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageQuality');
  const readingId = idParam.parse((await params).readingId);
  const input = await readJson(request, markControlSchema);
  return json(await markReadingAsControl(actor, readingId, input));
});

/** Names (or corrects) the control material a QC reading measured. */
export const PUT = apiRoute<Ctx>(async (request, { params }) => {
  const actor = await requireActor(request, 'manageQuality');
  const readingId = idParam.parse((await params).readingId);
  const { controlMaterialId } = await readJson(request, setControlMaterialSchema);
  return json(await setReadingControlMaterial(actor, readingId, controlMaterialId));
});
