import { beforeEach, describe, expect, it, jest } from '@jest/globals';
import { TestBed } from '@angular/core/testing';
import { MatDialog } from '@angular/material/dialog';
import { firstValueFrom, of, throwError, toArray, type Observable } from 'rxjs';

import { ApiError } from '../../../core/http/api-error';
import type { ReasonDialogData } from './reason-dialog';
import { ReasonPrompt } from './reason-prompt';

const REASON_REQUIRED = new ApiError(400, 'reason-required', 'Study TDM-900 already has a session: give a reason for changing the visit schedule.');

describe('ReasonPrompt.send', () => {
  /** What the fake dialog closes with; undefined is a cancel. */
  let dialogAnswer: string | undefined;
  let opened: ReasonDialogData[];
  let sent: (string | undefined)[];

  beforeEach(() => {
    dialogAnswer = undefined;
    opened = [];
    sent = [];
    const dialog = {
      open: (_component: unknown, config: { data: ReasonDialogData }) => {
        opened.push(config.data);
        return { afterClosed: () => of(dialogAnswer) };
      },
    };
    TestBed.configureTestingModule({ providers: [{ provide: MatDialog, useValue: dialog }] });
  });

  /** A write the server refuses without a reason and accepts with one. */
  function write(reason: string | undefined): Observable<string> {
    sent.push(reason);
    return reason ? of(`saved: ${reason}`) : throwError(() => REASON_REQUIRED);
  }

  function run(send: (reason: string | undefined) => Observable<string>): Promise<string[]> {
    return firstValueFrom(TestBed.inject(ReasonPrompt).send(send).pipe(toArray()));
  }

  it('asks with the server message and sends again with the reason', async () => {
    dialogAnswer = 'Protocol amendment 2';
    await expect(run(write)).resolves.toEqual(['saved: Protocol amendment 2']);
    expect(sent).toEqual([undefined, 'Protocol amendment 2']);
    expect(opened).toHaveLength(1);
    expect(opened[0].message).toBe(REASON_REQUIRED.message);
  });

  it('completes without a value and sends nothing more when the person cancels', async () => {
    await expect(run(write)).resolves.toEqual([]);
    expect(sent).toEqual([undefined]);
  });

  it('asks nobody when the server accepts the change at once', async () => {
    await expect(run(() => of('saved'))).resolves.toEqual(['saved']);
    expect(opened).toEqual([]);
  });

  it.each([
    ['another refusal', new ApiError(422, 'visit-windows-overlap', 'Visits overlap')],
    ['an unexpected error', new TypeError('boom')],
  ])('passes %s through unchanged', async (_label, error) => {
    const send = jest.fn(() => throwError(() => error));
    await expect(run(send)).rejects.toBe(error);
    expect(send).toHaveBeenCalledTimes(1);
    expect(opened).toEqual([]);
  });
});
