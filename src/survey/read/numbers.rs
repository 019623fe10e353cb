//! Messages for cells that are not numbers: what is wrong and what to
//! write instead, in the words of the column's unit.

use super::SurveyErrorKind;
use super::text::NumProblem;
use crate::units::{LengthUnit, VersineUnit};

#[derive(Clone, Copy)]
pub(super) enum Quantity {
    Chainage(LengthUnit),
    Versine(VersineUnit),
}

fn length_word(u: LengthUnit) -> &'static str {
    match u {
        LengthUnit::Metre => "metres",
        LengthUnit::Foot => "feet",
    }
}

pub(crate) fn versine_word(u: VersineUnit) -> &'static str {
    match u {
        VersineUnit::Millimetre => "millimetres",
        VersineUnit::Metre => "metres",
        VersineUnit::Inch => "inches",
        VersineUnit::Foot => "feet",
    }
}

pub(super) fn number_error(p: NumProblem, text: &str, q: Quantity, delim: char) -> SurveyErrorKind {
    let comma = |s: &str| {
        if delim == ';' {
            s.replace('.', ",")
        } else {
            s.to_string()
        }
    };
    let (word, example) = match q {
        Quantity::Chainage(u) => (
            length_word(u),
            comma(if u == LengthUnit::Metre {
                "1234.5"
            } else {
                "4050.5"
            }),
        ),
        Quantity::Versine(u) => (
            versine_word(u),
            comma(match u {
                VersineUnit::Millimetre => "12.5",
                VersineUnit::Metre => "0.0125",
                VersineUnit::Inch => "0.5",
                VersineUnit::Foot => "0.04",
            }),
        ),
    };
    let base = match q {
        Quantity::Chainage(_) => format!("write the chainage in {word}, e.g. {example}"),
        Quantity::Versine(_) => format!(
            "write the versine in {word}, e.g. {example}, or leave the cell empty for a missing reading"
        ),
    };
    if text.contains('\u{2212}') {
        return SurveyErrorKind::NotANumber {
            todo: format!(
                "it has a typographic minus sign (\u{2212}, U+2212), which word processors write; type the minus as a hyphen ({})",
                crate::diag::quote_capped(&text.replace('\u{2212}', "-"))
            ),
            text: crate::diag::quote_capped(text),
        };
    }
    let text = crate::diag::quote_capped(text);
    let todo = match p {
        NumProblem::NotFinite => return SurveyErrorKind::NotFinite { text, todo: base },
        NumProblem::Garbage => base,
        NumProblem::HasUnit(u) => format!(
            "write the number alone, e.g. {example}: the unit ({word}) comes from the column name, not '{u}'"
        ),
        NumProblem::SheetError => match q {
            Quantity::Chainage(_) => "this is a spreadsheet error value; fix the formula in the spreadsheet and export again, or delete the line".to_string(),
            Quantity::Versine(_) => "this is a spreadsheet error value; fix the formula in the spreadsheet and export again, or leave the cell empty for a missing reading".to_string(),
        },
        NumProblem::Separators => format!(
            "write numbers without thousands separators and with one decimal separator, e.g. {example}"
        ),
        NumProblem::DecimalCommaInCommaFile => {
            let point = text.replace(',', ".");
            // `1,010` may be 1.01 with a decimal comma or 1010 with a
            // thousands separator: say both.
            let three = text
                .rsplit_once(',')
                .is_some_and(|(_, d)| d.len() == 3 && d.bytes().all(|b| b.is_ascii_digit()));
            if three {
                format!(
                    "this file separates fields with commas: if the comma is a decimal comma, write a decimal point ({point}); if it separates thousands, leave it out ({})",
                    text.replace(',', "")
                )
            } else {
                format!("this file separates fields with commas, so write a decimal point ({point})")
            }
        }
        NumProblem::StationPlus => match q {
            Quantity::Chainage(_) => format!(
                "write the chainage as one number of {word} ({} is {})",
                text,
                text.replace('+', "")
            ),
            Quantity::Versine(_) => base,
        },
    };
    SurveyErrorKind::NotANumber { text, todo }
}
