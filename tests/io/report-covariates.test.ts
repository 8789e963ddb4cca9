// The report's trend coefficients of a covariate model: values, standard errors, share explained, escaping.
import { describe, expect, it } from 'vitest';
import { modelText, trendCoefficientsTable } from '../../src/io/report.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';

const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'exponential', sill: 1, scale: 80 }],
  trend: { covariates: ['dist', '<b>soil</b>'], levels: { '<b>soil</b>': ['clay', 'sand'] } },
  transform: 'log',
  fit: {
    method: 'reml', converged: true, trendVarianceExplained: 0.4213,
    coefficients: [
      { name: 'constant', estimate: 5.25, standardError: 0.5 },
      { name: 'dist', estimate: -0.0096, standardError: 0.0037 },
      { name: '<b>soil</b>=sand', estimate: 0.7, standardError: 0.2 },
    ],
  },
};

describe('trendCoefficientsTable', () => {
  it('trendCoefficientsTable lists each coefficient with its standard error and the share explained, text escaped', () => {
    const text = String(trendCoefficientsTable(model));
    expect(text).toContain('data-figure="coefficient dist" data-value="-0.0096"');
    expect(text).toContain('data-figure="standard error dist" data-value="0.0037"');
    expect(text).toContain('data-figure="variance explained" data-value="0.4213"');
    expect(text).toContain('42.1 %');
    expect(text).toContain('ln(value)');
    expect(text).not.toContain('<b>');
    expect(text).toContain('&lt;b&gt;soil&lt;/b&gt;=sand');
  });
  it('trendCoefficientsTable gives nothing for a model without covariates; modelText names the covariates and the reference level', () => {
    expect(trendCoefficientsTable({ ...model, trend: 'constant' })).toBeNull();
    expect(modelText(model)).toContain('covariates dist, <b>soil</b> (categorical: clay, sand; clay the reference)');
  });
});
