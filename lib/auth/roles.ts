// Who may do what. Checked on the server in every handler; the UI only mirrors it.
import type { StaffRole } from '@/db/schema';

export const ROLES = ['admin', 'veterinarian', 'technician'] as const satisfies readonly StaffRole[];

export const can = {
  readResults: ['admin', 'veterinarian', 'technician'],
  assignReadings: ['admin', 'veterinarian', 'technician'],
  voidReadings: ['admin', 'veterinarian', 'technician'],
  reviewResults: ['veterinarian'],
  /** Register, edit, close and merge patient records (and their owners). */
  managePatients: ['admin', 'veterinarian', 'technician'],
  manageClinic: ['admin'],
  /** Lab quality records: kit lots, the temperature log, control materials, QC runs, verifications. */
  manageQuality: ['admin', 'technician'],
} as const satisfies Record<string, readonly StaffRole[]>;

export type Permission = keyof typeof can;

export const roleLabel: Record<StaffRole, string> = {
  admin: 'Administrator',
  veterinarian: 'Veterinarian',
  technician: 'Veterinary technician',
};

export function allowed(role: StaffRole, permission: Permission): boolean {
  return (can[permission] as readonly StaffRole[]).includes(role);
}
