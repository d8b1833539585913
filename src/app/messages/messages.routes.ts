import { Routes } from '@angular/router';

import { MessageListPage } from './message-list/message-list';

/** Messages: open to every signed-in user (the app routes check sign-in). */
export const MESSAGES_ROUTES: Routes = [{ path: '', component: MessageListPage, title: 'Messages · Tidemark' }];
