import { afterEach, beforeEach, describe, expect, it, jest } from '@jest/globals';
import { TestBed } from '@angular/core/testing';
import { MatSnackBar } from '@angular/material/snack-bar';

import { ApiError } from '../http/api-error';
import { AppErrorHandler } from './app-error-handler';

// One log line per failure and a short notice for the user (common practice; house style).
describe('AppErrorHandler', () => {
  let handler: AppErrorHandler;
  let open: jest.Mock<(message: string, action?: string) => unknown>;
  let consoleError: ReturnType<typeof jest.spyOn>;

  beforeEach(() => {
    open = jest.fn<(message: string, action?: string) => unknown>();
    TestBed.configureTestingModule({
      providers: [AppErrorHandler, { provide: MatSnackBar, useValue: { open } }],
    });
    handler = TestBed.inject(AppErrorHandler);
    consoleError = jest.spyOn(console, 'error').mockImplementation(() => undefined);
  });

  afterEach(() => consoleError.mockRestore());

  it('logs an error once even when it is reported twice', () => {
    const error = new TypeError('x is undefined');
    handler.handleError(error);
    handler.handleError(error);

    expect(consoleError).toHaveBeenCalledTimes(1);
    expect(open).toHaveBeenCalledTimes(1);
    expect(open.mock.calls[0][0]).toMatch(/Something unexpected went wrong/);
    expect(open.mock.calls[0][0]).not.toContain('x is undefined');
  });

  it('shows the words of an unhandled API error with its reference', () => {
    handler.handleError(new ApiError(500, 'server', 'Tidemark had a problem on the server.', 'req-77'));

    expect(open.mock.calls[0][0]).toBe('Tidemark had a problem on the server. (reference req-77)');
  });
});
