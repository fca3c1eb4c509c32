import { requireActor } from '@/lib/auth/guards';
import { ApiError, apiRoute, json } from '@/lib/http';
import { commitPatientImport, previewPatientImport } from '@/lib/import/patients';
import { IMPORT_LIMITS, type ColumnMapping } from '@/lib/import/patients-csv';
import { patientImportForm } from '@/lib/validation/reports';

/** Patient CSV upload (multipart: file + options): step=preview writes nothing; step=confirm imports. */
export const POST = apiRoute(async (request) => {
  const actor = await requireActor(request, 'manageClinic');
  const declared = Number(request.headers.get('content-length') ?? 0);
  if (declared > IMPORT_LIMITS.maxBytes + 64 * 1024) {
    throw new ApiError(413, 'file_too_large', `The file is larger than ${IMPORT_LIMITS.maxBytes / 1024 / 1024} MB; split it into smaller files.`);
  }
  if (!(request.headers.get('content-type') ?? '').toLowerCase().startsWith('multipart/form-data')) {
    throw new ApiError(415, 'unsupported_media_type', 'Upload the CSV as multipart/form-data with a "file" field.');
  }
  const form = await request.formData().catch(() => {
    throw new ApiError(400, 'invalid_form', 'The upload could not be read as a form.');
  });
  const file = form.get('file');
  if (!(file instanceof File)) throw new ApiError(400, 'no_file', 'Choose a CSV file to upload.', [{ path: 'file', message: 'Required.' }]);
  const options = patientImportForm.parse(Object.fromEntries([...form.entries()].filter(([k]) => k !== 'file')));
  const input = {
    bytes: new Uint8Array(await file.arrayBuffer()),
    fileName: file.name.slice(0, 200),
    mapping: options.mapping as ColumnMapping | undefined,
    duplicates: options.duplicates,
    dateFormat: options.dateFormat,
  };
  if (options.step === 'preview') return json(await previewPatientImport(actor, input));
  return json(await commitPatientImport(actor, { ...input, skipInvalid: options.skipInvalid === 'true' }));
}, { upload: true });
