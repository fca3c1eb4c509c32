import { describe, expect, it } from 'vitest';
import { ROLES, allowed, can, roleLabel, type Permission } from '@/lib/auth/roles';
import { staffRole } from '@/db/schema';

// The intended table, written out from the product brief (who may do what), not copied from the code:
// everyone on the clinical side reads, assigns and voids results; only veterinarians review;
// only administrators manage the clinic (staff, bridges, instruments).
const EXPECTED: Record<Permission, Record<(typeof ROLES)[number], boolean>> = {
  readResults: { admin: true, veterinarian: true, technician: true },
  assignReadings: { admin: true, veterinarian: true, technician: true },
  voidReadings: { admin: true, veterinarian: true, technician: true },
  reviewResults: { admin: false, veterinarian: true, technician: false },
  manageClinic: { admin: true, veterinarian: false, technician: false },
  // Issue 8: "Technicians, veterinarians and admins may register" patients.
  managePatients: { admin: true, veterinarian: true, technician: true },
  // Lab quality records are kept by the people who run the lab: technicians and administrators (common practice, no source).
  manageQuality: { admin: true, veterinarian: false, technician: true },
};

describe('roles', () => {
  it('has the same roles as the database enum', () => {
    expect([...ROLES].sort()).toEqual([...staffRole.enumValues].sort());
  });

  it('has exactly the permissions of the intended table', () => {
    expect(Object.keys(can).sort()).toEqual(Object.keys(EXPECTED).sort());
  });

  for (const [permission, byRole] of Object.entries(EXPECTED) as [Permission, Record<string, boolean>][]) {
    for (const [role, expected] of Object.entries(byRole)) {
      it(`${role} ${expected ? 'may' : 'may not'} ${permission}`, () => {
        expect(allowed(role as (typeof ROLES)[number], permission)).toBe(expected);
      });
    }
  }

  it('labels every role', () => {
    for (const role of ROLES) expect(roleLabel[role]).toMatch(/\S/);
  });
});
