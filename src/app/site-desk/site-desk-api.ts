import { httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable } from '@angular/core';
import * as z from 'zod';

import { siteSchema, type Site } from '@shared/contracts/studies';

const siteListSchema = z.array(siteSchema);

/** Typed reads for the site desk; the server limits every list to the coordinator's own sites. */
@Injectable({ providedIn: 'root' })
export class SiteDeskApi {
  /** Sites of one study that the caller may see. */
  sitesOf(studyId: () => string | undefined): HttpResourceRef<Site[] | undefined> {
    return httpResource(
      () => {
        const id = studyId();
        return id ? `/api/studies/${encodeURIComponent(id)}/sites` : undefined;
      },
      { parse: (body) => siteListSchema.parse(body) },
    );
  }
}
