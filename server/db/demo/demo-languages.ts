import type { AnswerCheck } from '../../../shared/utils/schemas/checks'
import type { Language, Translations } from '../../../shared/utils/schemas/languages'
import type { Question, QuestionGroup } from '../../../shared/utils/schemas/questionnaire'

// The demo round is asked in English (the main language) and in Kiswahili. The Kiswahili texts follow the usage of
// East African agricultural extension (afisa ugani, pembejeo, kaya); before a real survey, have a native speaker check
// them (translation and back-translation is common practice).

export const DEMO_LANGUAGES: Language[] = [{ code: 'en', name: 'English' }, { code: 'sw', name: 'Kiswahili' }]

const SW: Translations[string] = {
  adopted: {
    label: 'Je, shamba hili limetumia mbegu za mtama zinazostahimili ukame (Ombara Gold) msimu huu?',
    help: 'Jibu ndiyo ikiwa tu shamba lilizitumia kwenye sehemu ya ardhi yake msimu huu.'
  },
  farm_size_ha: { label: 'Ukubwa wa shamba', help: 'Ardhi yote ambayo kaya inalima msimu huu.', unit: 'hekta' },
  household_size: { label: 'Idadi ya watu wa kaya', help: 'Watu wanaokula kutoka chungu kimoja.', unit: 'watu' },
  schooling_years: { label: 'Miaka ya shule ya mkuu wa kaya', unit: 'miaka' },
  age_head: { label: 'Umri wa mkuu wa kaya', unit: 'miaka' },
  female_head: { label: 'Je, kaya inaongozwa na mwanamke?' },
  dealer_distance_km: { label: 'Umbali hadi kwa muuzaji wa pembejeo aliye karibu zaidi', unit: 'km' },
  extension_contact: { label: 'Je, kaya ilipata ushauri kutoka kwa afisa ugani msimu uliopita?' },
  credit_access: { label: 'Je, kaya inaweza kupata mkopo msimu huu?' },
  group_member: { label: 'Je, ni mwanachama wa kikundi cha wakulima?' },
  livestock_tlu: { label: 'Mifugo inayomilikiwa', help: 'Kwa vipimo vya mifugo vya kitropiki (ng\'ombe mmoja ni 0.7, mbuzi mmoja ni 0.1).', unit: 'TLU' },
  owns_phone: { label: 'Je, kuna mtu katika kaya anayemiliki simu ya mkononi?' },
  credit_source: {
    label: 'Mkopo unatoka wapi?',
    options: {
      savings_group: 'Kikundi cha kuweka akiba cha kijiji',
      dealer_credit: 'Mkopo kutoka kwa muuzaji wa pembejeo',
      microlender: 'Taasisi ya mikopo midogo',
      relative: 'Ndugu au rafiki'
    }
  },
  heard_from: {
    label: 'Kaya ilisikia kuhusu mbegu hii kutoka wapi?',
    help: 'Weka alama kwa kila chanzo ambacho mkulima anataja.',
    options: {
      radio: 'Kipindi cha redio',
      neighbour: 'Jirani',
      extension_officer: 'Afisa ugani',
      dealer: 'Muuzaji wa pembejeo',
      field_day: 'Siku ya maonyesho shambani'
    }
  },
  // The plots group (plots-demo.ts) and its questions.
  plots: { label: 'Vipande vya shamba', help: 'Safu moja kwa kila kipande cha shamba ambacho kaya inalima msimu huu.' },
  plot_size_ha: { label: 'Ukubwa wa kipande', unit: 'hekta' },
  plot_soil: {
    label: 'Aina kuu ya udongo wa kipande',
    options: { sandy: 'Udongo wa kichanga', loam: 'Udongo tifutifu', clay: 'Udongo wa mfinyanzi' }
  },
  plot_sown: { label: 'Je, mbegu zilipandwa kwenye kipande hiki?' },
  plot_seed_kg: { label: 'Mbegu zilizopandwa kwenye kipande hiki', unit: 'kg' }
}

const SW_CHECK_MESSAGES: Record<string, string> = {
  schooling_years: 'Miaka ya shule lazima iwe chini ya umri wa mkuu wa kaya: hakikisha majibu yote mawili na mkulima.'
}

/** The demo definition with its second language: the languages, the Kiswahili texts and each check's message. */
export function withDemoLanguages(definition: { questions: Question[], checks: AnswerCheck[], groups?: QuestionGroup[] }) {
  return {
    ...definition,
    checks: definition.checks.map(c => SW_CHECK_MESSAGES[c.question] ? { ...c, messages: { sw: SW_CHECK_MESSAGES[c.question]! } } : c),
    languages: DEMO_LANGUAGES,
    translations: { sw: SW }
  }
}
