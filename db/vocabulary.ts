// The value lists behind the schema's enums, as plain arrays: forms in the browser validate against
// them without loading the ORM (db/schema.ts builds its pgEnums from these).
export const SPECIES = ['dog', 'cat', 'rabbit', 'ferret', 'bird', 'reptile', 'other'] as const;
export const PATIENT_SEXES = ['male', 'male_neutered', 'female', 'female_spayed', 'unknown'] as const;
export const SAMPLE_TYPES = ['whole_blood', 'serum', 'plasma', 'urine', 'other'] as const;
