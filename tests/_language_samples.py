"""Invented sentences and words in every supported language, for tests of tm_compare.text.languages.

Every sentence was written for these tests (news from the invented city of Quillhaven, no real
person, outlet or event); the word lists are inflected forms chosen for the tests.
"""

SENTENCES = {
    "ca": [
        "L'ajuntament de Quillhaven ha aprovat el pressupost per a la nova escola del barri.",
        "Els veïns es queixen que els lloguers han pujat molt aquest any a la ciutat.",
        "La tempesta de dimarts va inundar els carrers del port i diverses botigues.",
    ],
    "cs": [
        "Městská rada v Quillhavenu schválila rozpočet na opravu přístavní hráze.",
        "Nájemníci si stěžují, že nájmy v centru města letos výrazně stouply.",
        "Bouře v úterý zaplavila ulice u přístavu a poškodila několik obchodů.",
    ],
    "da": [
        "Byrådet i Quillhaven har vedtaget budgettet for den nye skole i bydelen.",
        "Lejerne klager over, at huslejen er steget meget i år i hele byen.",
        "Stormen i tirsdags oversvømmede gaderne ved havnen og flere butikker.",
    ],
    "de": [
        "Der Stadtrat von Quillhaven hat den Haushalt für die neue Schule im Viertel beschlossen.",
        "Die Mieter beklagen, dass die Mieten in diesem Jahr stark gestiegen sind.",
        "Der Sturm am Dienstag hat die Straßen am Hafen und mehrere Läden überflutet.",
    ],
    "el": [
        "Το δημοτικό συμβούλιο του Κουίλχεϊβεν ενέκρινε τον προϋπολογισμό για το νέο σχολείο.",
        "Οι ενοικιαστές παραπονιούνται ότι τα ενοίκια αυξήθηκαν πολύ φέτος στην πόλη.",
        "Η καταιγίδα της Τρίτης πλημμύρισε τους δρόμους του λιμανιού και αρκετά καταστήματα.",
    ],
    "en": [
        "The Quillhaven city council approved the budget for the new school in the district.",
        "Tenants complain that rents have risen sharply this year across the city.",
        "Tuesday's storm flooded the streets by the harbour and several shops.",
    ],
    "es": [
        "El ayuntamiento de Quillhaven aprobó el presupuesto para la nueva escuela del barrio.",
        "Los inquilinos se quejan de que los alquileres han subido mucho este año en la ciudad.",
        "La tormenta del martes inundó las calles del puerto y varias tiendas.",
    ],
    "fi": [
        "Quillhavenin kaupunginvaltuusto hyväksyi talousarvion kaupunginosan uudelle koululle.",
        "Vuokralaiset valittavat, että vuokrat ovat nousseet tänä vuonna paljon koko kaupungissa.",
        "Tiistain myrsky tulvi sataman kadut ja useita kauppoja.",
    ],
    "fr": [
        "Le conseil municipal de Quillhaven a voté le budget de la nouvelle école du quartier.",
        "Les locataires se plaignent que les loyers ont beaucoup augmenté cette année en ville.",
        "La tempête de mardi a inondé les rues du port et plusieurs boutiques.",
    ],
    "hu": [
        "Quillhaven városi tanácsa elfogadta a költségvetést a kerület új iskolájára.",
        "A bérlők panaszkodnak, hogy a lakbérek idén nagyon megemelkedtek a városban.",
        "A keddi vihar elárasztotta a kikötő utcáit és több üzletet.",
    ],
    "id": [
        "Dewan kota Quillhaven menyetujui anggaran untuk sekolah baru di kawasan itu.",
        "Para penyewa mengeluh bahwa harga sewa naik tajam tahun ini di seluruh kota.",
        "Badai pada hari Selasa membanjiri jalan-jalan di sekitar pelabuhan dan beberapa toko.",
    ],
    "it": [
        "Il consiglio comunale di Quillhaven ha approvato il bilancio per la nuova scuola del quartiere.",
        "Gli inquilini si lamentano che gli affitti sono aumentati molto quest'anno in città.",
        "La tempesta di martedì ha allagato le strade del porto e diversi negozi.",
    ],
    "nl": [
        "De gemeenteraad van Quillhaven heeft de begroting voor de nieuwe school in de wijk goedgekeurd.",
        "Huurders klagen dat de huren dit jaar in de hele stad sterk zijn gestegen.",
        "De storm van dinsdag zette de straten bij de haven en verschillende winkels onder water.",
    ],
    "no": [
        "Bystyret i Quillhaven har vedtatt budsjettet for den nye skolen i bydelen.",
        "Leietakerne klager over at husleien har steget mye i år i hele byen.",
        "Stormen på tirsdag oversvømte gatene ved havna og flere butikker.",
    ],
    "pl": [
        "Rada miasta Quillhaven przyjęła budżet na nową szkołę w dzielnicy.",
        "Najemcy skarżą się, że czynsze w tym roku bardzo wzrosły w całym mieście.",
        "Wtorkowa burza zalała ulice przy porcie i kilka sklepów.",
    ],
    "pt": [
        "A câmara municipal de Quillhaven aprovou o orçamento para a nova escola do bairro.",
        "Os inquilinos queixam-se de que as rendas subiram muito este ano em toda a cidade.",
        "A tempestade de terça-feira inundou as ruas do porto e várias lojas.",
    ],
    "ro": [
        "Consiliul local din Quillhaven a aprobat bugetul pentru noua școală din cartier.",
        "Chiriașii se plâng că chiriile au crescut foarte mult anul acesta în tot orașul.",
        "Furtuna de marți a inundat străzile din port și mai multe magazine.",
    ],
    "ru": [
        "Городской совет Квиллхейвена утвердил бюджет новой школы в районе.",
        "Жильцы жалуются, что арендная плата в этом году сильно выросла по всему городу.",
        "Шторм во вторник затопил улицы у порта и несколько магазинов.",
    ],
    "sv": [
        "Kommunfullmäktige i Quillhaven har antagit budgeten för den nya skolan i stadsdelen.",
        "Hyresgästerna klagar på att hyrorna har stigit kraftigt i år i hela staden.",
        "Stormen i tisdags översvämmade gatorna vid hamnen och flera butiker.",
    ],
    "tr": [
        "Quillhaven belediye meclisi mahalledeki yeni okulun bütçesini onayladı.",
        "Kiracılar bu yıl şehir genelinde kiraların çok arttığından şikayet ediyor.",
        "Salı günkü fırtına limandaki sokakları ve birkaç dükkânı su altında bıraktı.",
    ],
}

# Inflected forms of everyday news words, made up for the stemmer checks.
WORDS = {
    "ca": ["escoles", "ciutats", "pressupostos", "lloguers", "tempestes", "aprovat"],
    "cs": ["městská", "rozpočtu", "přístavní", "nájemníci", "bouřemi", "obchodů"],
    "da": ["skolerne", "byrådet", "huslejen", "stormene", "butikkerne", "vedtaget"],
    "de": ["Sturmflutwarnungen", "Mieterinnen", "Häfen", "gestiegen", "Schulen", "Stadträte"],
    "el": ["σχολεία", "ενοικιαστές", "καταιγίδες", "λιμανιού", "δρόμους", "πόλεις"],
    "en": ["councils", "harbours", "flooding", "rented", "tenancies", "budgeted"],
    "es": ["escuelas", "inquilinos", "tormentas", "alquileres", "aprobado", "ciudades"],
    "fi": ["kaupungissa", "vuokralaiset", "myrskyt", "koululle", "satamasta", "kauppoja"],
    "fr": ["écoles", "locataires", "tempêtes", "augmenté", "boutiques", "conseillers"],
    "hu": ["városban", "bérlők", "viharok", "iskolájára", "kikötő", "üzleteket"],
    "id": ["menyetujui", "anggaran", "penyewa", "membanjiri", "pelabuhan", "keuangan"],
    "it": ["scuole", "inquilini", "tempeste", "affitti", "approvato", "negozi"],
    "nl": ["scholen", "huurders", "stormen", "gemeenteraden", "gestegen", "winkels"],
    "no": ["skolene", "leietakerne", "stormene", "husleien", "butikkene", "vedtatt"],
    "pl": ["szkołach", "najemcy", "burzami", "czynsze", "sklepów", "miastach"],
    "pt": ["escolas", "inquilinos", "tempestades", "rendas", "aprovou", "cidades"],
    "ro": ["școlile", "chiriașii", "furtunile", "străzile", "magazinelor", "orașul"],
    "ru": ["школами", "жильцы", "штормы", "улицы", "магазинов", "городскому"],
    "sv": ["skolorna", "hyresgästerna", "stormarna", "hyrorna", "butikerna", "antagit"],
    "tr": ["okulların", "kiracılar", "fırtınalar", "sokakları", "dükkânlar", "şehirlerde"],
}
