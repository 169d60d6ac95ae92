// Element Plus's English, with the words that read as the component
// library's demo replaced by Strayfield's own voice (empty lists, no match).
import en from 'element-plus/es/locale/lang/en'

type Messages = Record<string, unknown>

const ours: Record<string, Messages> = {
  select: { noMatch: 'Nothing by that name here', noData: 'Nothing to choose from yet', placeholder: 'Choose' },
  cascader: { noMatch: 'Nothing by that name here', noData: 'Nothing to choose from yet', placeholder: 'Choose' },
  table: { emptyText: 'Nothing here yet' },
  tree: { emptyText: 'Nothing here yet' },
  transfer: { noMatch: 'Nothing by that name here', noData: 'Nothing here yet' },
  messagebox: { title: 'Strayfield', confirm: 'Go ahead', cancel: 'Keep it as it is' },
  popconfirm: { confirmButtonText: 'Go ahead', cancelButtonText: 'Keep it as it is' },
}

const el = en.el as unknown as Record<string, Messages>
export const strayfieldLocale = {
  ...en,
  name: 'en',
  el: Object.fromEntries(Object.entries(el).map(([k, v]) => [k, ours[k] ? { ...v, ...ours[k] } : v])),
} as typeof en
