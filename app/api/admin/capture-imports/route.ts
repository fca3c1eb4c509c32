import { requireActor } from '@/lib/auth/guards';
import { ApiError, apiRoute, json } from '@/lib/http';
import { CAPTURE_IMPORT_LIMITS, commitCaptureImport, listCaptureImports, previewCaptureImport } from '@/lib/import/captures';
import { captureImportForm } from '@/lib/validation/reports';

export const GET = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  return json({ imports: await listCaptureImports(actor) });
});

const tooLarge = () =>
  new ApiError(413, 'file_too_large', `The file is larger than ${CAPTURE_IMPORT_LIMITS.maxBytes / 1024 / 1024} MB; split the capture into smaller files.`, [{ path: 'file', message: 'Too large.' }]);

/** A raw capture file (multipart: file, instrumentId, step): step=preview writes nothing; step=confirm imports. */
export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  // Refused before the body is read when the size is declared; the file's own size is checked again below.
  if (Number(request.headers.get('content-length') ?? 0) > CAPTURE_IMPORT_LIMITS.maxBytes + 64 * 1024) throw tooLarge();
  if (!(request.headers.get('content-type') ?? '').toLowerCase().startsWith('multipart/form-data')) {
    throw new ApiError(415, 'unsupported_media_type', 'Upload the capture as multipart/form-data with a "file" field.');
  }
  const form = await request.formData().catch(() => {
    throw new ApiError(400, 'invalid_form', 'The upload could not be read as a form.');
  });
  const file = form.get('file');
  if (!(file instanceof File)) throw new ApiError(400, 'no_file', 'Choose a capture file to upload.', [{ path: 'file', message: 'Required.' }]);
  if (file.size > CAPTURE_IMPORT_LIMITS.maxBytes) throw tooLarge();
  const options = captureImportForm.parse(Object.fromEntries([...form.entries()].filter(([k]) => k !== 'file')));
  const input = {
    instrumentId: options.instrumentId,
    // A name for people to recognise it by; control characters would only garble the audit trail.
    fileName: file.name.replace(/[\u0000-\u001f\u007f]/g, '').slice(0, 200) || 'capture',
    bytes: new Uint8Array(await file.arrayBuffer()),
  };
  if (options.step === 'preview') return json(await previewCaptureImport(actor, input));
  return json(await commitCaptureImport(actor, input), { status: 201 });
}, { upload: true });
