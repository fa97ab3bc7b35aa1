// Reads a JSON array of {ucum, si_unit} on stdin; for each, asks the UCUM reference library
// (@lhncbc/ucum-lhc, the U.S. National Library of Medicine's implementation of The Unified Code
// for Units of Measure) whether the code is valid and what one of it is in si_unit. Writes a JSON
// array of {ucum, valid, message, si_value} to stdout. Test-only (tests/e2e/ucum_codes_test.py).
const ucum = require('@lhncbc/ucum-lhc');

const utils = ucum.UcumLhcUtils.getInstance();
let input = '';
process.stdin.on('data', (chunk) => { input += chunk; });
process.stdin.on('end', () => {
  const out = JSON.parse(input).map(({ ucum: code, si_unit: si }) => {
    const validation = utils.validateUnitString(code, true);
    const conversion = utils.convertUnitTo(code, 1, si);
    return {
      ucum: code,
      valid: validation.status === 'valid',
      message: validation.msg.join('; '),
      si_value: conversion.status === 'succeeded' ? conversion.toVal : null,
    };
  });
  process.stdout.write(JSON.stringify(out));
});
