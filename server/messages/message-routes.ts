import express, { type Router } from 'express';
import * as z from 'zod';
import { userMessageSchema } from '../../shared/contracts/sessions.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { MessageService } from './message-service.js';

export function messageRoutes(registry: ApiRouteRegistry, messages: MessageService): Router {
  const router = express.Router();
  registry.add(router, {
    method: 'get',
    path: '/api/me/messages',
    tag: 'me',
    summary: 'The latest 100 messages Tidemark sent you (the same as the e-mails)',
    access: { kind: 'signed-in' },
    response: z.array(userMessageSchema),
    handler: ({ principal }) => messages.messagesOf(principal!.user.id),
  });
  return router;
}
