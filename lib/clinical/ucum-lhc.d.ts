// The package ships no types; this is the part Benchwire uses.
declare module '@lhncbc/ucum-lhc' {
  interface ValidationResult {
    status: 'valid' | 'invalid' | 'error';
    ucumCode: string | null;
    unit?: { code: string; name: string; guidance: string | null };
    msg: string[];
  }
  interface ConversionResult {
    status: 'succeeded' | 'failed' | 'error';
    toVal: number | null;
    msg: string[];
  }
  interface UcumLhcUtils {
    validateUnitString(unit: string, suggest?: boolean): ValidationResult;
    convertUnitTo(fromUnit: string, value: number, toUnit: string): ConversionResult;
  }
  interface UcumUnit {
    csCode_: string;
    ciCode_: string;
    isMetric_: boolean;
    isBase_: boolean;
  }
  interface UnitTables {
    getAllUnitCodes(): string[];
    getUnitByCode(code: string): UcumUnit | undefined;
  }
  const ucum: { UcumLhcUtils: { getInstance(): UcumLhcUtils }; UnitTables: { getInstance(): UnitTables } };
  export default ucum;
}

declare module '@lhncbc/ucum-lhc/source-cjs/prefixTables.js' {
  interface UcumPrefix {
    code_: string;
    ciCode_: string;
  }
  const prefixTables: { PrefixTables: { getInstance(): { allPrefixesByCode(): UcumPrefix[] } } };
  export default prefixTables;
}
