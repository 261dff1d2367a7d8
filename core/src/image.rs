pub struct Placeholder;
