import { describe, expect, it } from 'vitest';
import { toApiProblem } from './problem.ts';

describe('toApiProblem', () => {
  it('keeps the RFC 9457 members and the field list', () => {
    expect(
      toApiProblem(
        {
          type: 'https://gammaline.example/problems/validation',
          title: 'Invalid input',
          status: 422,
          detail: 'One field needs fixing.',
          instance: '/api/v1/swr',
          errors: [{ field: 'forwardPowerW', message: 'Must be greater than 0.' }, { field: 3 }],
          extra: true,
        },
        422,
      ),
    ).toEqual({
      type: 'https://gammaline.example/problems/validation',
      title: 'Invalid input',
      status: 422,
      detail: 'One field needs fixing.',
      instance: '/api/v1/swr',
      errors: [{ field: 'forwardPowerW', message: 'Must be greater than 0.' }],
    });
  });

  it('fills the members RFC 9457 lets a server leave out', () => {
    expect(toApiProblem({ title: 'Service Unavailable' }, 503)).toEqual({
      type: 'about:blank',
      title: 'Service Unavailable',
      status: 503,
      detail: '',
    });
  });

  it('refuses bodies without a title', () => {
    expect(toApiProblem({ status: 500 }, 500)).toBeNull();
    expect(toApiProblem('Internal error', 500)).toBeNull();
    expect(toApiProblem(null, 500)).toBeNull();
  });
});
