// Band library calls for the admin islands (the same JSON endpoints scripts use).
import { useMutation } from '@tanstack/react-query';
import type { ZeroPoint } from '../core/types';
import { apiFetch } from './api';

export interface CurvePreview {
  fileName: string;
  format: 'ecsv' | 'csv' | 'text';
  wavelengthColumn: string;
  responseColumn: string;
  wavelengthUnit: 'angstrom' | 'nm' | 'um';
  convention: 'photon' | 'energy';
  wavelengthAngstrom: number[];
  response: number[];
  pivotAngstrom: number;
  notes: string[];
}

export interface CurveUpload {
  fileName: string;
  content: string;
  wavelengthUnit: 'angstrom' | 'nm' | 'um';
  convention: 'photon' | 'energy';
}

/** A zero-point as POST /api/admin/bands/:key/zero-point takes it: the core's shape. */
export type ZeroPointBody = ZeroPoint;

export interface NewBandBody {
  band: {
    key: string;
    label: string;
    system: string;
    magnitudeSystem: 'vega' | 'ab';
    zeroPoint: ZeroPointBody | null;
    citation: string;
    licence: string;
  };
  curve: CurveUpload;
  reason: string;
}

export interface SavedBand {
  version: { label: string };
  band: { key: string; pivotAngstrom: number };
}

export function usePreviewCurve() {
  return useMutation({
    mutationFn: (body: CurveUpload) => apiFetch<{ curve: CurvePreview }>('/api/admin/bands/preview', { method: 'POST', body }).then((r) => r.curve),
  });
}

export function useCreateBand() {
  return useMutation({ mutationFn: (body: NewBandBody) => apiFetch<SavedBand>('/api/admin/bands', { method: 'POST', body }) });
}

export function useUpdateZeroPoint(key: string) {
  return useMutation({
    mutationFn: (body: { zeroPoint: ZeroPointBody; reason: string }) =>
      apiFetch<SavedBand>(`/api/admin/bands/${encodeURIComponent(key)}/zero-point`, { method: 'POST', body }),
  });
}
