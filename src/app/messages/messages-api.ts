import { httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable } from '@angular/core';
import * as z from 'zod';

import { userMessageSchema, type UserMessage } from '@shared/contracts/sessions';

const messageListSchema = z.array(userMessageSchema);

/** Typed reads of the signed-in user's messages. */
@Injectable({ providedIn: 'root' })
export class MessagesApi {
  /** Every e-mail Tidemark sent the user, as the server lists them. */
  myMessages(): HttpResourceRef<UserMessage[] | undefined> {
    return httpResource(() => '/api/me/messages', { parse: (body) => messageListSchema.parse(body) });
  }
}
