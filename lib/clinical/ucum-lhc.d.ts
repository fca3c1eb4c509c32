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
  const ucum: { UcumLhcUtils: { getInstance(): UcumLhcUtils } };
  export default ucum;
}
